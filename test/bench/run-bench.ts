// `npm run bench`: every case at full size, printed as one JSON document (bench-report.ts holds
// its schema; README.md, "Benchmark output", describes it). `npm run bench -- --suite kernels`
// runs one part: core (the vec, problem and compress suites, measured in one run), kernels,
// oracle, memory, wire, scale or view. The scale suite takes several minutes of real runs and is
// not part of the default document: ask for it with --suite scale; the same holds for the live
// view's (a minute or so: --suite view). `--case <substring>` keeps only
// the cases whose name holds it (case-filter.ts), e.g. `--suite scale --case logistic`.

import { parseArgs } from 'node:util';
import { benchReport, type BenchResult } from './bench-report.js';
import { benchSink, runBench } from './bench-cases.js';
import { runKernelBench } from './kernel-bench-cases.js';
import { runMemoryBench } from './memory-cases.js';
import { runOracleBench } from './oracle-bench-cases.js';
import { FULL_SCALE_SCENARIOS, runScaleBench } from './scale-cases.js';
import { resultsMatching, scaleScenariosMatching } from './case-filter.js';
import { runWireBench } from './wire-envelope-cases.js';
import { runLiveViewBench } from './live-view-cases.js';

const SUITES = {
  core: () => runBench(),
  kernels: () => runKernelBench(),
  oracle: () => runOracleBench(),
  memory: () => runMemoryBench(),
  wire: () => runWireBench(),
  scale: () => runScaleBench(scaleScenarios),
  view: () => runLiveViewBench(),
} satisfies Record<string, () => BenchResult[] | Promise<BenchResult[]>>;

const { values } = parseArgs({
  options: { suite: { type: 'string' }, case: { type: 'string' } },
});
const suite = values.suite;
const caseSubstring = values.case;
if (suite !== undefined && !Object.hasOwn(SUITES, suite)) {
  process.stderr.write(
    `--suite must be one of ${Object.keys(SUITES).join(', ')}, got "${suite}"\n`,
  );
  process.exit(2);
}
if (caseSubstring === '') {
  process.stderr.write('--case must name part of a case, got an empty string\n');
  process.exit(2);
}
const scaleScenarios =
  caseSubstring === undefined
    ? FULL_SCALE_SCENARIOS
    : scaleScenariosMatching(FULL_SCALE_SCENARIOS, caseSubstring);
if (suite === 'scale' && scaleScenarios.length === 0) {
  process.stderr.write(
    `--case "${caseSubstring}" matches no scale scenario (${FULL_SCALE_SCENARIOS.map((s) => s.label).join('; ')})\n`,
  );
  process.exit(2);
}
const measured =
  suite === undefined
    ? [
        ...runBench(),
        ...runKernelBench(),
        ...(await runOracleBench()),
        ...(await runMemoryBench()),
        ...runWireBench(),
      ]
    : await SUITES[suite as keyof typeof SUITES]();
const results = caseSubstring === undefined ? measured : resultsMatching(measured, caseSubstring);
if (results.length === 0) {
  process.stderr.write(`--case "${caseSubstring}" matches no case of the suite\n`);
  process.exit(2);
}
process.stdout.write(`${JSON.stringify(benchReport(results), null, 2)}\n`);
// Read the sink once, so that no engine can prove the measured results unused.
if (benchSink() === Number.MIN_VALUE) process.stderr.write('');
