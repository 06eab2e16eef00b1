// The memory estimate knows a perceptron: its dimension is the sum over layers of
// (inputs + 1) x outputs, its per-sample scratch is counted beside the shards, and a data set
// perceptron above the dimension limit is refused naming problem.hiddenWidths.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { ScenarioError } from '../../src/scenario/scenario-error.js';
import { assertMemoryFits, estimateRunMemory } from '../../src/engine/memory-estimate.js';
import { PERCEPTRON_VALUES_PER_UNIT } from '../../src/problem/perceptron.js';

const bundled = readFileSync(
  new URL('../../scenarios/iris-perceptron.yaml', import.meta.url),
  'utf8',
);

describe('the memory estimate of a perceptron', () => {
  it("counts the network's parameters and its per-sample scratch", () => {
    const estimate = estimateRunMemory(scenarioFromText(bundled, 'iris-perceptron.yaml'));
    // iris: 4 features, 3 classes, 150 samples; (4 + 1) x 16 + (16 + 1) x 3 = 131.
    expect(estimate.dim).toBe(131);
    expect(estimate.parts.kernels).toBe(150 * (4 + PERCEPTRON_VALUES_PER_UNIT * (16 + 3)) * 8);
  });

  it('refuses a data set perceptron above the dimension limit, naming the field', () => {
    const scenario = scenarioFromText(bundled, 'iris-perceptron.yaml', [
      'problem.hiddenWidths:[400, 400]',
    ]);
    let error: unknown = null;
    try {
      assertMemoryFits(scenario);
    } catch (thrown) {
      error = thrown;
    }
    expect(error).toBeInstanceOf(ScenarioError);
    const e = error as ScenarioError;
    expect(e.code).toBe('E_SCENARIO_FIELD');
    expect(e.fieldPath).toBe('problem.hiddenWidths');
    // (4 + 1) x 400 + (400 + 1) x 400 + (400 + 1) x 3 = 163,603.
    expect(e.message).toMatch(
      /data set iris has 163603 weights and biases, above the limit of 100000/,
    );
  });
});
