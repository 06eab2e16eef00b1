// The Monte Carlo band for random rounds, held against what it predicts: real in-process runs
// (runInProcess, the same engine `roundwire run` uses) and the closed-form floor of minibatch
// gradient descent (src/theory/minibatch-lyapunov.ts, itself checked against every listed batch
// in test/theory/minibatch-lyapunov.test.ts). The scenarios are small least-squares problems of
// our own (d = 4, three clients), so that a band of 32 replicas takes a few seconds.

import { describe, expect, it } from 'vitest';
import { scenarioSchema, type Scenario } from '../../src/scenario/schema.js';
import { planFor, runInProcess } from '../../src/engine/in-process-engine.js';
import {
  bandBlocker,
  BAND_REPLICAS_MAX,
  BAND_REPLICA_ROUNDS_MAX,
  BAND_VALUES_MAX,
  monteCarloBand,
  replicaSeed,
  sampleBands,
  stationaryWindow,
  windowAverage,
  type MonteCarloBand,
} from '../../src/engine/monte-carlo-band.js';
import { predictMinibatchFloor } from '../../src/engine/minibatch-floor-prediction.js';

const ROUNDS = 400;

function scenarioOf(seed: number, method: Record<string, unknown>, rounds = ROUNDS): Scenario {
  return scenarioSchema.parse({
    name: 'random-rounds',
    seed,
    problem: { kind: 'least-squares', regularization: 0.01 },
    data: {
      source: 'synthetic',
      features: 4,
      samplesPerClient: 30,
      noise: 0.5,
      conditionNumber: 4,
      minimizerSpread: 0.5,
    },
    clients: { count: 3 },
    method,
    run: { rounds },
  });
}

const minibatchGd = { name: 'gd', gradient: { minibatch: 4 } };

function bandOf(scenario: Scenario): MonteCarloBand {
  const { plan, theory } = planFor(scenario);
  const band = monteCarloBand(
    plan,
    theory.instance.objectives,
    theory.instance.global,
    theory.optimum,
  );
  if ('unavailableReason' in band) throw new Error(band.unavailableReason);
  return band;
}

/** A real run's f - f* by round, and its average over the stationary window. */
function measuredStationary(scenario: Scenario): number {
  const curve: number[] = [];
  runInProcess(scenario, {
    onRound: (record) => {
      if (record.suboptimality !== null) curve[record.round] = record.suboptimality;
    },
  });
  return windowAverage(curve, stationaryWindow(scenario.run.rounds));
}

describe('minibatch gradient descent on a quadratic', () => {
  const scenario = scenarioOf(7, minibatchGd);
  const band = bandOf(scenario);

  it('the closed-form floor lies inside the Monte Carlo 95% interval of the mean', () => {
    const { plan, theory } = planFor(scenario);
    const closed = predictMinibatchFloor(plan, theory.instance.objectives, theory.optimum.x);
    if (!('floor' in closed)) throw new Error(closed.unavailableReason);
    const [low, high] = band.stationary.meanInterval;
    expect(closed.floor).toBeGreaterThanOrEqual(low);
    expect(closed.floor).toBeLessThanOrEqual(high);
  });

  it("a real run's stationary average lies inside the single-run band", () => {
    const [low, high] = band.stationary.singleRunInterval;
    const measured = measuredStationary(scenario);
    expect(measured).toBeGreaterThanOrEqual(low);
    expect(measured).toBeLessThanOrEqual(high);
  });

  it('the band for the mean lies inside the single-run band, round by round', () => {
    for (let k = 0; k < band.rounds.length; k++) {
      // Where every replica agrees (round 0) the mean may differ from them by rounding.
      const rounding = 1e-12 * band.mean[k];
      expect(band.singleLow[k]).toBeLessThanOrEqual(band.mean[k] + rounding);
      expect(band.mean[k]).toBeLessThanOrEqual(band.singleHigh[k] + rounding);
      expect(band.meanLow[k]).toBeLessThanOrEqual(band.mean[k] + rounding);
    }
  });
});

describe('minibatch gradient descent over several seeds', () => {
  // Each seed builds its own data (shards derive from the plan seed), so each run is compared
  // with its own seed's predicted floor: the ratios measured / predicted, one per real run, must
  // average to 1 within their 95% t-interval (a one-sample t-test at the 5% level).
  it('the mean of measured / predicted stationary floors is consistent with 1', () => {
    const ratios: number[] = [];
    for (const seed of [1, 2, 3, 4, 5, 6, 7, 8]) {
      const scenario = scenarioOf(seed, minibatchGd);
      const { plan, theory } = planFor(scenario);
      const closed = predictMinibatchFloor(plan, theory.instance.objectives, theory.optimum.x);
      if (!('floor' in closed)) throw new Error(closed.unavailableReason);
      ratios.push(measuredStationary(scenario) / closed.floor);
    }
    const [low, high] = sampleBands(ratios).meanInterval;
    expect(low).toBeLessThanOrEqual(1);
    expect(high).toBeGreaterThanOrEqual(1);
  });
});

describe('partial participation', () => {
  it("FedAvg with a third of the clients a round: a real run's stationary average is inside the single-run band", () => {
    const scenario = scenarioOf(7, { name: 'fedavg', participation: 0.34, localSteps: 5 }, 150);
    const band = bandOf(scenario);
    expect(band.stationary.mean).toBeGreaterThan(0);
    const [low, high] = band.stationary.singleRunInterval;
    const measured = measuredStationary(scenario);
    expect(measured).toBeGreaterThanOrEqual(low);
    expect(measured).toBeLessThanOrEqual(high);
  });
});

describe('limits and seeds', () => {
  it('gives no band for deterministic rounds, and refuses replicas or sizes past the limits', () => {
    const deterministic = scenarioOf(7, { name: 'gd' });
    expect(bandBlocker(deterministic, 4, 32)).toMatch(/deterministic/);
    const random = scenarioOf(7, minibatchGd);
    expect(bandBlocker(random, 4, 32)).toBeNull();
    expect(bandBlocker(random, 4, BAND_REPLICAS_MAX + 1)).toMatch(/replicas must be/);
    expect(bandBlocker(random, 4, 2)).toMatch(/replicas must be/);
    const long = scenarioOf(7, minibatchGd, Math.ceil(BAND_VALUES_MAX / 32));
    expect(bandBlocker(long, 4, 32)).toMatch(/values held/);
    const walked = scenarioOf(7, minibatchGd, BAND_REPLICA_ROUNDS_MAX / 32 + 1);
    expect(bandBlocker(walked, 4, 32)).toMatch(/ideal rounds walked for the band/);
    const justWithin = scenarioOf(7, minibatchGd, BAND_REPLICA_ROUNDS_MAX / 32);
    expect(bandBlocker(justWithin, 4, 32)).toBeNull();
  });

  it('derives distinct replica seeds, none the plan seed', () => {
    const seeds = new Set(Array.from({ length: 64 }, (_, r) => replicaSeed(7, r)));
    expect(seeds.size).toBe(64);
    expect(seeds.has(7)).toBe(false);
    for (const seed of seeds) expect(Number.isSafeInteger(seed) && seed >= 0).toBe(true);
  });
});
