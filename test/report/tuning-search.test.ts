// The pieces of tuning that need no run: the log grid, golden-section search on a function with
// a known minimum, the order candidates rank in, and how options and the scenario's section merge.
import { describe, expect, it } from 'vitest';
import { bestStep, logGrid, runSearch } from '../../src/report/tuning-search.js';
import {
  compareMeasures,
  TUNING_FIGURES,
  type CandidateMeasure,
} from '../../src/report/tuning-figures.js';
import { tuningSpecOf } from '../../src/report/tuning-option.js';
import { tuningSchema } from '../../src/scenario/schema.js';

describe('logGrid', () => {
  it('steps by 10^(1/n) from the low end and includes both ends', () => {
    const grid = logGrid(0.1, 10, 8);
    expect(grid).toHaveLength(17);
    expect(grid[0]).toBe(0.1);
    expect(grid[16]).toBeCloseTo(10, 12);
    for (let i = 1; i < grid.length; i++)
      expect(grid[i] / grid[i - 1]).toBeCloseTo(10 ** 0.125, 12);
  });

  it('adds the high end when the steps miss it', () => {
    expect(logGrid(1, 5, 1)).toEqual([1, 5]);
  });
});

describe('golden-section search', () => {
  it('closes in on the minimum of a unimodal function of log(value) within its budget', () => {
    // (log10 v - log10 0.37)^2 has its one minimum at v = 0.37; after n evaluations the bracket
    // is (high - low) * 0.618^(n - 1) decades wide (golden section's fixed ratio).
    const target = Math.log10(0.37);
    const steps = runSearch(
      { kind: 'golden', low: 0.01, high: 10, budget: 20 },
      (v) => (Math.log10(v) - target) ** 2,
      (a, b) => a - b,
    );
    expect(steps).toHaveLength(20);
    const best = steps[bestStep(steps, (a, b) => a - b)].value;
    expect(Math.abs(Math.log10(best) - target)).toBeLessThan(3 * 0.618 ** 19);
  });
});

describe('the order candidates rank in', () => {
  const run = (over: Partial<CandidateMeasure>): CandidateMeasure => ({
    stopReason: 'rounds-complete',
    rounds: 50,
    finalSuboptimality: 1e-3,
    roundsToTarget: null,
    bytesToTarget: null,
    secondsToTarget: null,
    finalTestAccuracy: null,
    roundsToTargetAccuracy: null,
    ...over,
  });
  const figure = TUNING_FIGURES['rounds-to-target'];

  it('reaching the target first, by the figure; then not reaching, by final f - f*; diverged last', () => {
    const fast = run({
      stopReason: 'target-reached',
      roundsToTarget: 20,
      finalSuboptimality: 1e-9,
    });
    const slow = run({
      stopReason: 'target-reached',
      roundsToTarget: 30,
      finalSuboptimality: 1e-9,
    });
    const close = run({ finalSuboptimality: 1e-6 });
    const far = run({ finalSuboptimality: 1e-2 });
    const diverged = run({ stopReason: 'diverged', finalSuboptimality: Number.NaN });
    const sorted = [diverged, far, slow, close, fast].sort((a, b) => compareMeasures(figure, a, b));
    expect(sorted).toEqual([fast, slow, close, far, diverged]);
  });

  it('ranks a higher final held-out accuracy first; a run without one after every run with one', () => {
    const accuracy = TUNING_FIGURES['final-test-accuracy'];
    const high = run({ finalTestAccuracy: 0.9 });
    const low = run({ finalTestAccuracy: 0.8 });
    const none = run({ finalSuboptimality: 1e-9 });
    const sorted = [none, low, high].sort((a, b) => compareMeasures(accuracy, a, b));
    expect(sorted).toEqual([high, low, none]);
  });

  it('breaks a tie of whole rounds by the lower final f - f*', () => {
    const a = run({ stopReason: 'target-reached', roundsToTarget: 20, finalSuboptimality: 5e-10 });
    const b = run({ stopReason: 'target-reached', roundsToTarget: 20, finalSuboptimality: 1e-10 });
    expect(compareMeasures(figure, b, a)).toBeLessThan(0);
  });
});

describe('tuningSpecOf', () => {
  const section = tuningSchema.parse({ field: 'method.stepSize', range: [0.01, 1] });

  it('takes the scenario section, with the options overriding its fields', () => {
    const spec = tuningSpecOf({ tuneSearch: 'golden', tuneBudget: '9' }, section, { target: 1e-8 });
    expect(spec).toEqual({
      field: 'method.stepSize',
      search: { kind: 'golden', low: 0.01, high: 1, budget: 9 },
      budget: 9,
      figure: 'rounds-to-target',
    });
  });

  it('lets --tune replace the section, and is null when nothing asks for tuning', () => {
    const spec = tuningSpecOf({ tune: 'method.proxCoefficient:0.1/1' }, section, { target: 1e-8 });
    expect(spec?.field).toBe('method.proxCoefficient');
    expect(spec?.search).toEqual({ kind: 'list', values: [0.1, 1] });
    expect(tuningSpecOf({}, undefined, { target: 1e-8 })).toBeNull();
  });

  it('refuses a held-out figure where the scenario measures none', () => {
    const by = (figure: string) => ({ ...section, by: figure });
    expect(() => tuningSpecOf({}, by('final-test-accuracy'), { target: 0 })).toThrow(
      /^tuning\.by: final-test-accuracy needs a held-out accuracy: a classifier/,
    );
    expect(() =>
      tuningSpecOf({}, by('rounds-to-target-accuracy'), { target: 0, heldOutAccuracy: true }),
    ).toThrow(/needs run\.targetAccuracy/);
    expect(
      tuningSpecOf({}, by('final-test-accuracy'), { target: 0, heldOutAccuracy: true })?.figure,
    ).toBe('final-test-accuracy');
  });

  it('names the scenario field when the section is at fault', () => {
    expect(() => tuningSpecOf({}, { ...section, by: 'rounds-to-target' }, { target: 0 })).toThrow(
      /^tuning\.by: rounds-to-target needs a target/,
    );
  });
});
