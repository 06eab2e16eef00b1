// `npm run bench`: every case at full size, printed as one JSON document (bench-report.ts holds
// its schema; README.md, "Benchmark output", describes it). `npm run bench -- --suite kernels`
// runs one part: core (the vec, problem and compress suites, measured in one run), kernels,
// oracle, memory, wire or scale. The scale suite takes several minutes of real runs and is not
// part of the default document: ask for it with --suite scale.

import { parseArgs } from 'node:util';
import { benchReport, type BenchResult } from './bench-report.js';
import { benchSink, runBench } from './bench-cases.js';
import { runKernelBench } from './kernel-bench-cases.js';
import { runMemoryBench } from './memory-cases.js';
import { runOracleBench } from './oracle-bench-cases.js';
import { runScaleBench } from './scale-cases.js';
import { runWireBench } from './wire-envelope-cases.js';

const SUITES = {
  core: () => runBench(),
  kernels: () => runKernelBench(),
  oracle: () => runOracleBench(),
  memory: () => runMemoryBench(),
  wire: () => runWireBench(),
  scale: () => runScaleBench(),
} satisfies Record<string, () => BenchResult[] | Promise<BenchResult[]>>;

const { values } = parseArgs({ options: { suite: { type: 'string' } } });
const suite = values.suite;
if (suite !== undefined && !Object.hasOwn(SUITES, suite)) {
  process.stderr.write(
    `--suite must be one of ${Object.keys(SUITES).join(', ')}, got "${suite}"\n`,
  );
  process.exit(2);
}
const results =
  suite === undefined
    ? [
        ...runBench(),
        ...runKernelBench(),
        ...(await runOracleBench()),
        ...(await runMemoryBench()),
        ...runWireBench(),
      ]
    : await SUITES[suite as keyof typeof SUITES]();
process.stdout.write(`${JSON.stringify(benchReport(results), null, 2)}\n`);
// Read the sink once, so that no engine can prove the measured results unused.
if (benchSink() === Number.MIN_VALUE) process.stderr.write('');
