// Predictions past the state limit (PREDICTION_STATE_ENTRIES_MAX in src/engine/predict-run.ts)
// are skipped with a stated reason, before the round map is built; below it the reason for a
// missing floor names the fixed-point limit.
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { planFor } from '../../src/engine/in-process-engine.js';
import { predictRun, PREDICTION_STATE_ENTRIES_MAX } from '../../src/engine/predict-run.js';
import { roundMapStateEntries } from '../../src/engine/method-state-size.js';
import { estimateRunMemory } from '../../src/engine/memory-estimate.js';
import { FIXED_POINT_DIMENSION_MAX } from '../../src/theory/fixed-point.js';

const quickstart = readFileSync('scenarios/quickstart.yaml', 'utf8');

describe('prediction state limit', () => {
  it('skips a state past the limit with the entries and the limit, and the estimate counts nothing for it', () => {
    // FedAvg on 2,000 clients at d = 300: the round map's state is past 2^20 entries.
    const scenario = scenarioFromText(quickstart, 'quickstart.yaml', [
      'method.name:fedavg',
      'clients.count:2000',
      'data.samplesPerClient:5',
      'data.features:300',
      'run.rounds:1',
    ]);
    const entries = roundMapStateEntries(scenario, 300);
    expect(entries).toBeGreaterThan(PREDICTION_STATE_ENTRIES_MAX);
    const { plan, theory } = planFor(scenario);
    const prediction = predictRun(plan, theory);
    expect(prediction.unavailableReason).toBe(
      `no prediction: the method's state has ${entries} entries (fedavg, 2000 clients, dimension 300), above the limit of ${PREDICTION_STATE_ENTRIES_MAX}`,
    );
    expect(prediction.spectralRadius).toBeNull();
    expect(estimateRunMemory(scenario).parts.prediction).toBe(0);
  }, 60_000);

  it('below it, a state past the fixed-point limit gets its spectral radius and the reason for no floor', () => {
    // FedAvg on 8 clients at d = 2,000: well under the state limit, above the fixed-point one.
    const scenario = scenarioFromText(quickstart, 'quickstart.yaml', [
      'method.name:fedavg',
      'data.samplesPerClient:50',
      'data.features:2000',
      'run.rounds:1',
    ]);
    const entries = roundMapStateEntries(scenario, 2000);
    expect(entries).toBeGreaterThan(FIXED_POINT_DIMENSION_MAX);
    expect(entries).toBeLessThanOrEqual(PREDICTION_STATE_ENTRIES_MAX);
    const { plan, theory } = planFor(scenario);
    const prediction = predictRun(plan, theory);
    expect(prediction.unavailableReason).toBe(
      `no floor: the method's state has ${entries} entries, above the limit of ${FIXED_POINT_DIMENSION_MAX} for solving its fixed point (only the spectral radius is given)`,
    );
    // The rate of gradient steps on a quadratic is below 1 (Nesterov, Introductory Lectures on
    // Convex Optimization, Thm 2.1.15), so a settled spectral radius lies in (0, 1).
    expect(prediction.spectralRadius).toBeGreaterThan(0);
    expect(prediction.spectralRadius).toBeLessThan(1);
    // Asked again (a coordinator's metrics, then the run's end), the same prediction, not a
    // second walk of the round map; from another initial model, a fresh one.
    expect(predictRun(plan, theory)).toBe(prediction);
    expect(predictRun(plan, theory, new Float64Array(plan.dim).fill(1))).not.toBe(prediction);
  }, 60_000);
});
