import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { initialModelOf } from '../../src/problem/initial-model.js';
import { perceptronLayout } from '../../src/problem/perceptron-layout.js';

const bundled = readFileSync(
  new URL('../../scenarios/iris-perceptron.yaml', import.meta.url),
  'utf8',
);
const quickstart = readFileSync(
  new URL('../../scenarios/quickstart.yaml', import.meta.url),
  'utf8',
);

// iris: 4 features, 3 classes; hidden widths [16]: (4 + 1) x 16 + (16 + 1) x 3 = 131.
const layers = perceptronLayout(4, [16], 3);
const DIM = 131;

describe('initialModelOf', () => {
  it('starts a convex problem at zero', () => {
    const scenario = scenarioFromText(quickstart, 'quickstart.yaml');
    expect(Array.from(initialModelOf({ scenario, dim: 20 }))).toEqual(new Array(20).fill(0));
  });

  it('starts a perceptron at Glorot-uniform weights (AISTATS 2010, eq. 16) and zero biases', () => {
    const scenario = scenarioFromText(bundled, 'iris-perceptron.yaml');
    const x = initialModelOf({ scenario, dim: DIM });
    for (const span of layers) {
      const limit = Math.sqrt(6 / (span.inputs + span.outputs));
      const weights = x.subarray(span.weightAt, span.weightAt + span.inputs * span.outputs);
      expect(weights.every((w) => Math.abs(w) <= limit)).toBe(true);
      // Uniform on [-l, l]: the mean square is l^2 / 3; a sample of 48 or 64 is within half of it.
      const meanSquare = weights.reduce((sum, w) => sum + w * w, 0) / weights.length;
      expect(Math.abs(meanSquare - (limit * limit) / 3)).toBeLessThan((limit * limit) / 6);
      expect(Array.from(x.subarray(span.biasAt, span.biasAt + span.outputs))).toEqual(
        new Array(span.outputs).fill(0),
      );
    }
  });

  it('is a pure function of the seed: the same bits again, other bits for another seed', () => {
    const scenario = scenarioFromText(bundled, 'iris-perceptron.yaml');
    const again = initialModelOf({ scenario, dim: DIM });
    expect(initialModelOf({ scenario, dim: DIM })).toEqual(again);
    const other = scenarioFromText(bundled, 'iris-perceptron.yaml', ['seed:12']);
    expect(initialModelOf({ scenario: other, dim: DIM })).not.toEqual(again);
  });

  it('refuses a dimension that no perceptron of the scenario has', () => {
    const scenario = scenarioFromText(bundled, 'iris-perceptron.yaml');
    expect(() => initialModelOf({ scenario, dim: DIM + 1 })).toThrow(/has 132 parameters/);
  });
});
