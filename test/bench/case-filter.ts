// `npm run bench -- --case <substring>`: only the cases whose name holds the substring (case
// sensitive). The scale suite's runs take minutes each, so it filters its scenarios by label
// before running any (a scenario's cases are all named "<label>: ..."); the other suites are
// measured whole and their results filtered.

import type { BenchResult } from './bench-report.js';
import type { ScaleScenario } from './scale-cases.js';

/** The scale scenarios a --case substring selects: those whose label holds it. */
export function scaleScenariosMatching(
  scenarios: readonly ScaleScenario[],
  substring: string,
): ScaleScenario[] {
  return scenarios.filter((s) => s.label.includes(substring));
}

/** The results a --case substring keeps: those whose case name holds it. */
export function resultsMatching(results: readonly BenchResult[], substring: string): BenchResult[] {
  return results.filter((r) => r.case.includes(substring));
}
