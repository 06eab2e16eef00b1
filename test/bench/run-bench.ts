// `npm run bench`: every case at full size, printed as one JSON document (bench-report.ts holds
// its schema; README.md, "Benchmark output", describes it).

import { benchReport } from './bench-report.js';
import { benchSink, runBench } from './bench-cases.js';
import { runMemoryBench } from './memory-cases.js';
import { runOracleBench } from './oracle-bench-cases.js';

const results = [...runBench(), ...(await runOracleBench()), ...(await runMemoryBench())];
process.stdout.write(`${JSON.stringify(benchReport(results), null, 2)}\n`);
// Read the sink once, so that no engine can prove the measured results unused.
if (benchSink() === Number.MIN_VALUE) process.stderr.write('');
