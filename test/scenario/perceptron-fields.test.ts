// The perceptron's scenario fields: its shape is required for it and refused for the other
// kinds, its parameter count is held to the dimension limit, and stepSize "auto" (1/L) is
// refused because a perceptron has no L.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { ScenarioError } from '../../src/scenario/scenario-error.js';

const bundled = readFileSync(
  new URL('../../scenarios/iris-perceptron.yaml', import.meta.url),
  'utf8',
);
const quickstart = readFileSync(
  new URL('../../scenarios/quickstart.yaml', import.meta.url),
  'utf8',
);

function failure(text: string, tweaks: string[]): ScenarioError {
  try {
    scenarioFromText(text, 'bad.yaml', tweaks);
  } catch (error) {
    expect(error).toBeInstanceOf(ScenarioError);
    return error as ScenarioError;
  }
  throw new Error('expected the scenario to be rejected');
}

describe('perceptron scenario fields', () => {
  it('accepts the bundled perceptron scenario as written', () => {
    const s = scenarioFromText(bundled, 'iris-perceptron.yaml');
    expect(s.problem).toMatchObject({ kind: 'perceptron', hiddenWidths: [16], activation: 'tanh' });
  });

  it('needs the hidden widths and the activation of a perceptron, with no default', () => {
    const text = bundled.replace(/\n {2}hiddenWidths: \[16\]/, '');
    const e = failure(text, []);
    expect(e.code).toBe('E_SCENARIO_FIELD');
    expect(e.fieldPath).toBe('problem.hiddenWidths');
    expect(e.message).toMatch(/a perceptron needs problem\.hiddenWidths/);
  });

  it('refuses a network shape on a convex kind', () => {
    const e = failure(quickstart, ['problem.activation:tanh']);
    expect(e.fieldPath).toBe('problem.activation');
    expect(e.message).toMatch(/belongs to kind "perceptron" only, not "least-squares"/);
  });

  it('refuses three hidden layers and a width above the limit', () => {
    expect(failure(bundled, ['problem.hiddenWidths:[4, 4, 4]']).fieldPath).toBe(
      'problem.hiddenWidths',
    );
    expect(failure(bundled, ['problem.hiddenWidths:[5000]']).fieldPath).toBe(
      'problem.hiddenWidths[0]',
    );
  });

  it("holds the parameter count to the dimension limit, naming the layers' widths", () => {
    const synthetic = [
      'data:{source: synthetic, features: 784, partition: {kind: iid}, testFraction: 0.2}',
      'problem.classes:10',
    ];
    // (784 + 1) x 64 + (64 + 1) x 10 = 50,890 parameters: within the limit of 100,000.
    expect(() =>
      scenarioFromText(bundled, 'ok.yaml', [...synthetic, 'problem.hiddenWidths:[64]']),
    ).not.toThrow();
    // (784 + 1) x 200 + (200 + 1) x 10 = 159,010: above it.
    const e = failure(bundled, [...synthetic, 'problem.hiddenWidths:[200]']);
    expect(e.fieldPath).toBe('problem.hiddenWidths');
    expect(e.message).toMatch(
      /784 -> 200 -> 10 has 159010 weights and biases, above the limit of 100000/,
    );
  });

  it('refuses stepSize auto, which is 1/L, for a perceptron', () => {
    const e = failure(bundled, ['method.stepSize:auto']);
    expect(e.fieldPath).toBe('method.stepSize');
    expect(e.message).toMatch(/no smoothness constant L/);
  });
});
