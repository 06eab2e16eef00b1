// The round map's Jacobian-vector products by tangent rounds (src/engine/round-map-jacobian.ts):
// on least squares they equal the affine map's linear part (read by differences, affine-map.ts)
// to rounding, on logistic a central finite difference of the round map itself to its O(h^2)
// error, for every method; and what cannot be linearized is refused with its reason.
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { Rng } from '../../src/base/rng.js';
import { planFor } from '../../src/engine/in-process-engine.js';
import { buildRoundMap } from '../../src/engine/round-map.js';
import {
  linearizationBlocker,
  roundMapLinearization,
} from '../../src/engine/round-map-jacobian.js';
import { linearPart } from '../../src/theory/affine-map.js';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { predictRun } from '../../src/engine/predict-run.js';

const quickstart = readFileSync('scenarios/quickstart.yaml', 'utf8');
const methods = ['gd', 'fedavg', 'fedprox', 'fednova', 'scaffold', 'fedlin', 'fedsplit'];

/** A small quickstart: 4 clients, d = 6. */
function small(method: string, kind: string, extra: string[] = []) {
  return scenarioFromText(quickstart, 'quickstart.yaml', [
    `method.name:${method}`,
    `problem.kind:${kind}`,
    'clients.count:4',
    'data.features:6',
    ...extra,
  ]);
}

const norm = (a: ArrayLike<number>) => Math.hypot(...Array.from(a));
const distance = (a: ArrayLike<number>, b: ArrayLike<number>) =>
  Math.hypot(...Array.from(a, (value, j) => value - b[j]));

function randomVector(rng: Rng, n: number): Float64Array {
  return Float64Array.from({ length: n }, () => rng.normal());
}

describe('Jacobian-vector products of the round map', () => {
  it.each(methods)('%s on least squares: equal to the linear part of the affine map', (method) => {
    const { plan, theory } = planFor(small(method, 'least-squares'));
    const roundMap = buildRoundMap(plan, theory.instance.objectives, new Float64Array(plan.dim));
    const linearize = roundMapLinearization(plan, theory.instance.objectives, roundMap.template);
    const at = linearize(roundMap.start);
    // T(s) itself is the round map's own image, bit for bit: the same walk on the same objectives.
    expect(Array.from(at.image)).toEqual(Array.from(roundMap.map(roundMap.start)));
    const m = linearPart(roundMap.map, roundMap.start);
    const rng = Rng.fromSeed(11);
    for (let trial = 0; trial < 3; trial++) {
      const v = randomVector(rng, roundMap.start.length);
      const exact = at.jvp(v);
      // linearPart's difference quotient is exact to a few ulps of ||M|| ||v|| (affine-map.ts);
      // 1e-12 relative leaves room for the accumulation over a round (common practice).
      expect(distance(exact, m(v))).toBeLessThanOrEqual(1e-12 * (1 + norm(exact)) * norm(v));
    }
  });

  it.each(methods)(
    '%s on logistic: matches a central finite difference of the round map',
    (method) => {
      const { plan, theory } = planFor(small(method, 'logistic'));
      const roundMap = buildRoundMap(plan, theory.instance.objectives, new Float64Array(plan.dim));
      const linearize = roundMapLinearization(plan, theory.instance.objectives, roundMap.template);
      const s = roundMap.start;
      const at = linearize(s);
      const v = randomVector(Rng.fromSeed(5), s.length);
      const exact = at.jvp(v);
      // The central difference (T(s + h v) - T(s - h v)) / 2h errs by O(h^2) (common practice):
      // halving h must cut the error about fourfold, and at h = 1e-4 it is far below ||J v||.
      const errorAt = (h: number) => {
        const plus = roundMap.map(s.map((value, j) => value + h * v[j]));
        const minus = roundMap.map(s.map((value, j) => value - h * v[j]));
        return distance(
          plus.map((value, j) => (value - minus[j]) / (2 * h)),
          exact,
        );
      };
      const coarse = errorAt(2e-3);
      const fine = errorAt(1e-3);
      expect(fine).toBeLessThan(1e-4 * norm(exact));
      expect(coarse / fine).toBeGreaterThan(3.5);
      expect(coarse / fine).toBeLessThan(4.5);
      // The map is not affine here: the difference quotient at a large step is visibly off.
      expect(errorAt(1)).toBeGreaterThan(1e3 * fine);
    },
  );

  it('refuses what a tangent walk cannot follow, with the reason, and predicts nothing there', () => {
    const early = small('fedsplit', 'logistic', ['method.proxTolerance:0.001']);
    const { plan, theory } = planFor(early);
    expect(linearizationBlocker(plan)).toMatch(
      /FedSplit stops its inner steps on a gradient-norm test/,
    );
    const prediction = predictRun(plan, theory);
    expect(prediction.kind).toBeNull();
    expect(prediction.unavailableReason).toBe(linearizationBlocker(plan));
    expect(
      linearizationBlocker(planFor(small('fedavg', 'logistic', ['method.participation:0.5'])).plan),
    ).toBe('partial participation makes the round map random');
  });
});
