// sampleScore, the held-out evaluation's per-objective score, agrees with each objective's own
// loss (its mean over the samples plus the L2 term is f(x), to rounding) and counts as correct
// exactly the samples whose highest class score (logistic: sign of a . x) is their label, as a
// plain loop over the same shard finds.
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { createObjective } from '../../src/problem/create-objective.js';
import type { ObjectiveSpec } from '../../src/problem/objective.js';
import type { Shard } from '../../src/problem/shard.js';

const SAMPLES = 40;
const FEATURES = 5;
const CLASSES = 3;

function shardFor(kind: ObjectiveSpec['kind'], rng: Rng): Shard {
  const features = Float64Array.from({ length: SAMPLES * FEATURES }, () => rng.normal());
  const targets = Float64Array.from({ length: SAMPLES }, () =>
    kind === 'least-squares' ? rng.normal() : rng.nextInt(kind === 'logistic' ? 2 : CLASSES),
  );
  return { clientId: 0, sampleCount: SAMPLES, featureCount: FEATURES, features, targets };
}

const specs: ObjectiveSpec[] = [
  { kind: 'least-squares', regularization: 0.1 },
  { kind: 'logistic', regularization: 0.1 },
  { kind: 'softmax', regularization: 0.1, classes: CLASSES },
  {
    kind: 'perceptron',
    regularization: 0.1,
    classes: CLASSES,
    hiddenWidths: [4],
    activation: 'tanh',
  },
];

describe('sampleScore', () => {
  for (const spec of specs) {
    it(`${spec.kind}: the loss sum matches f(x), and the correct count a plain argmax`, () => {
      const rng = Rng.fromSeed(17);
      const shard = shardFor(spec.kind, rng);
      const objective = createObjective(spec, shard);
      const x = Float64Array.from({ length: objective.dim }, () => rng.normal());
      const score = objective.sampleScore(x);
      let normSquared = 0;
      for (const v of x) normSquared += v * v;
      const expected = objective.loss(x);
      const got = score.lossSum / SAMPLES + 0.5 * spec.regularization * normSquared;
      // the same terms summed in another order: within a few ulps of the value (common practice)
      expect(Math.abs(got - expected)).toBeLessThanOrEqual(1e-12 * Math.abs(expected));
      if (spec.kind === 'least-squares') {
        expect(score.correctCount).toBe(0);
        return;
      }
      if (spec.kind === 'perceptron') {
        expect(score.correctCount).toBeGreaterThanOrEqual(0);
        expect(score.correctCount).toBeLessThanOrEqual(SAMPLES);
        return;
      }
      let correct = 0;
      for (let s = 0; s < SAMPLES; s++) {
        const row = shard.features.subarray(s * FEATURES, (s + 1) * FEATURES);
        const scoreOf = (c: number) => {
          let z = 0;
          for (let j = 0; j < FEATURES; j++) z += x[c * FEATURES + j] * row[j];
          return z;
        };
        let predicted: number;
        if (spec.kind === 'logistic') predicted = scoreOf(0) > 0 ? 1 : 0;
        else {
          predicted = 0;
          for (let c = 1; c < CLASSES; c++) if (scoreOf(c) > scoreOf(predicted)) predicted = c;
        }
        if (predicted === shard.targets[s]) correct++;
      }
      expect(score.correctCount).toBe(correct);
    });
  }
});
