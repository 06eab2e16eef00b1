import { describe, expect, it } from 'vitest';
import { figureStatistics } from '../../src/report/repeat-statistics.js';
import { figureVerdict } from '../../src/report/repeat-verdict.js';
import { parseRankBy } from '../../src/report/repeat-figures.js';
import { repeatScenario, repeatSeed, resolveRepeatOptions } from '../../src/report/repeat-plan.js';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';

function series(variant: string, values: (number | null)[]) {
  return { variant, values, statistics: figureStatistics(values, 0.95) };
}

describe('the paired verdict over repeats', () => {
  it('a leader ahead in every repeat by a steady margin is a clear winner, though the spreads overlap', () => {
    // Spreads of 100 and a margin of 10 +- 1: unpaired intervals overlap, the paired one does not.
    const leader = [100, 300, 200, 400, 250];
    const runnerUp = [111, 309, 210, 411, 259];
    const v = figureVerdict(
      'bytesToTarget',
      [series('slow', runnerUp), series('fast', leader)],
      0.95,
    );
    expect(v.decision).toBe('clear-winner');
    expect(v.leader!.variant).toBe('fast');
    expect(v.difference!.mean).toBeCloseTo(10, 12);
    expect(v.difference!.lower).toBeGreaterThan(0);
    expect(v.difference!.method).toBe('paired-t');
  });

  it('differences of both signs give no clear winner', () => {
    const v = figureVerdict(
      'secondsToTarget',
      [series('a', [1, 2, 3, 4]), series('b', [1.5, 1.5, 3.5, 3.8])],
      0.95,
    );
    expect(v.decision).toBe('no-clear-winner');
    expect(v.difference!.lower).toBeLessThan(0);
  });

  it('ranks only variants with the figure in every repeat, and names the rest', () => {
    const v = figureVerdict(
      'roundsToTarget',
      [
        series('partly', [5, null, 5]),
        series('always', [9, 9, 10]),
        series('never', [null, null, null]),
      ],
      0.95,
    );
    expect(v.decision).toBe('only-one-ranked');
    expect(v.leader!.variant).toBe('always');
    expect(v.partial).toEqual(['partly']);
  });
});

describe('repeat options and seeds', () => {
  const scenario = loadScenarioFile('scenarios/quickstart.yaml');

  it('repeat 1 is the scenario as written; later repeats vary the seed and keep the data seed unless asked', () => {
    expect(repeatScenario(scenario, 1, false)).toBe(scenario);
    const second = repeatScenario(scenario, 2, false);
    expect(second.seed).toBe(repeatSeed(scenario.seed, 2));
    expect(second.seed).not.toBe(scenario.seed);
    expect(second.dataSeed).toBe(scenario.seed);
    expect(repeatScenario(scenario, 2, true).dataSeed).toBe(second.seed);
  });

  it('the command line wins over the scenario section; too many runs is bad input with a code', () => {
    const section = { count: 4, redrawData: true, confidence: 0.9 };
    expect(resolveRepeatOptions(section, { repeats: 2 }, 3)).toEqual({
      count: 2,
      redrawData: true,
      confidence: 0.9,
    });
    expect(resolveRepeatOptions(undefined, {}, 3)).toEqual({
      count: 1,
      redrawData: false,
      confidence: 0.95,
    });
    expect(() => resolveRepeatOptions(undefined, { repeats: 100 }, 64)).toThrow(
      expect.objectContaining({ code: 'E_COMPARE_REPEATS' }),
    );
  });

  it('--rank-by names the figure or lists the accepted ones', () => {
    expect(parseRankBy('seconds-to-target')).toBe('secondsToTarget');
    expect(() => parseRankBy('speed')).toThrow(/expected one of rounds-to-target, bytes-to-target/);
  });
});
