// --case of `npm run bench`: which scale scenarios run and which results are kept, and the exit
// code 2 of a substring that selects nothing (the compiled bench, run for real).
import { spawnSync } from 'node:child_process';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { resultsMatching, scaleScenariosMatching } from './case-filter.js';
import { FULL_SCALE_SCENARIOS } from './scale-cases.js';
import type { BenchResult } from './bench-report.js';
import { repositoryRoot } from './repository-root.js';

const RUN_SECONDS_MAX = 60;

function result(name: string): BenchResult {
  return {
    suite: 'scale',
    case: name,
    shape: {},
    figure: 1,
    unit: 's',
  } as BenchResult;
}

describe('--case', () => {
  it('selects the logistic scale scenario alone by part of its label', () => {
    const chosen = scaleScenariosMatching(FULL_SCALE_SCENARIOS, 'logistic');
    expect(chosen.map((s) => s.label)).toEqual(['logistic FedLin']);
    expect(chosen[0]).toBe(FULL_SCALE_SCENARIOS.find((s) => s.problem === 'logistic'));
  });

  it('matches case-sensitively and may select nothing', () => {
    expect(scaleScenariosMatching(FULL_SCALE_SCENARIOS, 'LOGISTIC')).toEqual([]);
  });

  it('keeps the results whose case name holds the substring, in their order', () => {
    const results = ['a: setup in process', 'b: setup distributed', 'a: peak RSS'].map(result);
    expect(resultsMatching(results, 'a: ').map((r) => r.case)).toEqual([
      'a: setup in process',
      'a: peak RSS',
    ]);
    expect(resultsMatching(results, 'setup').map((r) => r.case)).toEqual([
      'a: setup in process',
      'b: setup distributed',
    ]);
  });

  it('refuses a scale substring that selects no scenario, with exit code 2 and the labels', () => {
    const run = spawnSync(
      process.execPath,
      [
        join(repositoryRoot(), 'dist', 'test', 'bench', 'run-bench.js'),
        '--suite',
        'scale',
        '--case',
        'no such scenario',
      ],
      { encoding: 'utf8', timeout: RUN_SECONDS_MAX * 1000 },
    );
    expect(run.status).toBe(2);
    expect(run.stderr).toContain('--case "no such scenario" matches no scale scenario');
    expect(run.stderr).toContain('logistic FedLin');
    expect(run.stdout).toBe('');
  });
});
