// Newton-GMRES on a nonlinear map whose fixed point and Jacobian are known in closed form:
// T(s)_j = s_j - eta_j sinh(s_j - a_j), a gradient step on sum_j cosh(s_j - a_j), whose only
// stationary point is s = a, with J(a) = diag(1 - eta_j) (the derivative of sinh at 0 is 1).
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import {
  newtonFixedPoint,
  type RoundMapLinearization,
} from '../../src/theory/newton-fixed-point.js';
import { operatorSpectralRadius } from '../../src/theory/operator-rate.js';
import { TheoryError } from '../../src/theory/theory-error.js';
import { codeOf } from '../support/error-code.js';

function sinhStep(centre: Float64Array, steps: Float64Array): RoundMapLinearization {
  return (s) => {
    const image = s.map((value, j) => value - steps[j] * Math.sinh(value - centre[j]));
    const slopes = s.map((value, j) => 1 - steps[j] * Math.cosh(value - centre[j]));
    return { image, jvp: (v) => v.map((value, j) => slopes[j] * value) };
  };
}

describe('newtonFixedPoint', () => {
  const rng = Rng.fromSeed(3);
  const n = 10;
  const centre = Float64Array.from({ length: n }, () => rng.normal());
  // Step sizes in [0.05, 0.95]: every 1 - eta_j lies in (0, 1), a contraction near a.
  const steps = Float64Array.from({ length: n }, (_, j) => 0.05 + (0.9 * j) / (n - 1));

  it('finds the fixed point to rounding, after plain rounds and a few Newton steps', () => {
    const result = newtonFixedPoint(sinhStep(centre, steps), new Float64Array(n));
    for (let j = 0; j < n; j++) expect(Math.abs(result.state[j] - centre[j])).toBeLessThan(1e-13);
    expect(result.warmupRounds).toBeGreaterThan(0);
    expect(result.newtonSteps).toBeGreaterThan(0);
    // Newton converges quadratically (Knoll and Keyes 2004), a handful of steps from the basin.
    expect(result.newtonSteps).toBeLessThanOrEqual(6);
  });

  it('hands back the Jacobian at the fixed point, whose spectral radius is max |1 - eta_j|', () => {
    const result = newtonFixedPoint(sinhStep(centre, steps), new Float64Array(n));
    const rate = operatorSpectralRadius(result.jacobian, n);
    expect(rate.converged).toBe(true);
    // 1 - 0.05 = 0.95: the slowest coordinate.
    expect(Math.abs(rate.spectralRadius - 0.95)).toBeLessThan(1e-10);
  });

  it('fails with the residual and the steps when the map has no fixed point', () => {
    const drift: RoundMapLinearization = (s) => ({
      image: s.map((value) => value + 1),
      jvp: (v) => Float64Array.from(v),
    });
    expect(codeOf(() => newtonFixedPoint(drift, new Float64Array(3)), TheoryError)).toBe(
      'E_THEORY_NOT_CONVERGED',
    );
    expect(() => newtonFixedPoint(drift, new Float64Array(3), { warmupRoundsMax: 5 })).toThrow(
      /\|\|T\(s\) - s\|\| at 1\.732e\+0 .* after 5 plain rounds and 0 Newton steps/,
    );
  });

  it('refuses a state past the fixed-point limit and bad options', () => {
    expect(
      codeOf(
        () =>
          newtonFixedPoint(sinhStep(centre, steps), new Float64Array(n), { warmupResidualDrop: 2 }),
        TheoryError,
      ),
    ).toBe('E_THEORY_ARGUMENT');
    expect(
      codeOf(() => newtonFixedPoint(sinhStep(centre, steps), new Float64Array(0)), TheoryError),
    ).toBe('E_THEORY_DIMENSION');
  });
});
