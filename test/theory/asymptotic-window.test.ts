// The asymptotic window on synthetic two-mode curves f_k = q^k + c (rho lambda_2)^k, the shape
// of f - f* for an affine round map with eigenvalues rho > |lambda_2| whose limit is x* (the
// cross term of a quadratic in the error; src/theory/asymptotic-window.ts). With c = -1 the
// local slope bias is exactly the bound the window is built on, so the asymptotic round is known
// in closed form; with c = 100 the assumption |c| <= 1 fails and the fitted rate strays.

import { describe, expect, it } from 'vitest';
import {
  DOMINANCE_TOLERANCE,
  SUBDOMINANT_RESIDUAL_TRUSTED,
  WINDOW_POINTS_MIN,
  assessAsymptoticRate,
  asymptoticRound,
  type ModeEstimate,
} from '../../src/theory/asymptotic-window.js';
import type { CurvePoint } from '../../src/theory/measure-curve.js';

// The cluster the issue names (round-map eigenvalues 0.960 and 0.956).
const RHO = 0.96;
const LAMBDA_2 = 0.956;
const Q = RHO * RHO;
const R = LAMBDA_2 / RHO;
/** rounding noise of a curve that starts at 1 (common practice: a thousand ulps) */
const NOISE = 1e3 * Number.EPSILON;

const modes: ModeEstimate = {
  spectralRadius: RHO,
  rate: Q,
  subdominantModulus: LAMBDA_2,
  subdominantRelativeResidual: 0,
  floor: 0,
};

function twoModes(rounds: number, weight: number): CurvePoint[] {
  return Array.from({ length: rounds + 1 }, (_, k) => ({
    round: k,
    suboptimality: Q ** k + weight * (RHO * LAMBDA_2) ** k,
  }));
}

/** |d/dk log(q^k - (rho lambda_2)^k) - log q|: the slope bias of the c = -1 curve at round k */
const slopeBias = (k: number) => (R ** k * Math.abs(Math.log(R))) / (1 - R ** k);
const logRatio = (rate: number, reference: number) =>
  Math.abs(Math.log(rate) / Math.log(reference) - 1);

describe('the asymptotic round', () => {
  it('is the first round at which the second mode moves the slope by at most the tolerance', () => {
    const start = asymptoticRound(modes);
    const allowed = DOMINANCE_TOLERANCE * Math.abs(Math.log(Q));
    expect(slopeBias(start)).toBeLessThanOrEqual(allowed);
    expect(slopeBias(start - 1)).toBeGreaterThan(allowed);
  });

  it('is 0 for a single mode, and the worst case 1 / (tol |log q|) for an untrusted lambda_2', () => {
    expect(asymptoticRound({ ...modes, subdominantModulus: null })).toBe(0);
    const untrusted = { ...modes, subdominantRelativeResidual: 10 * SUBDOMINANT_RESIDUAL_TRUSTED };
    const worst = Math.ceil(1 / (DOMINANCE_TOLERANCE * Math.abs(Math.log(Q))));
    expect(asymptoticRound(untrusted)).toBe(worst);
    // The worst case bounds every trusted ratio (the bias bound peaks as r tends to 1).
    for (const lambda of [0.5, 0.9, 0.95, 0.959, 0.95999])
      expect(asymptoticRound({ ...modes, subdominantModulus: lambda })).toBeLessThanOrEqual(worst);
  });

  it('with a floor, also waits for the quadratic term (ratio rho against the linear one)', () => {
    const withFloor = { ...modes, rate: RHO, floor: 1e-3, subdominantModulus: 0.1 };
    const a = DOMINANCE_TOLERANCE; // |log q| / |log r| = 1 for r = q = rho
    expect(asymptoticRound(withFloor)).toBe(Math.ceil(Math.log(a / (1 + a)) / Math.log(RHO)));
  });
});

describe('assessAsymptoticRate on a two-mode curve', () => {
  it('fits from the asymptotic round and finds q within the tolerance, alike on both curves', () => {
    const start = asymptoticRound(modes);
    const curve = twoModes(start + 400, -1);
    // Exact values: no noise level, so the window runs to the last round.
    const result = assessAsymptoticRate(curve, curve, modes, 0);
    expect(result.status).toBe('asymptotic');
    expect(result.window).toEqual([start, start + 400]);
    expect(logRatio(result.measured!, Q)).toBeLessThanOrEqual(DOMINANCE_TOLERANCE);
    expect(result.predictedOverWindow).toBe(result.measured);
    expect(result.measuredStandardError).toBeGreaterThan(0);
  });

  it('says "not yet asymptotic" with the rounds needed when the run stops before the asymptotic round', () => {
    const start = asymptoticRound(modes);
    const curve = twoModes(Math.floor(start / 2), -1);
    const result = assessAsymptoticRate(curve, curve, modes, NOISE);
    expect(result.status).toBe('not-yet-asymptotic');
    expect(result.roundsNeeded).toBe(start + WINDOW_POINTS_MIN - 1);
    expect(result.note).toBe(
      `not yet asymptotic (needs about ${start + WINDOW_POINTS_MIN - 1} rounds)`,
    );
    // Still like with like over the pre-asymptotic window.
    expect(result.predictedOverWindow).toBe(result.measured);
  });

  it('says there is no clean window when the curve reaches the noise before the asymptotic round', () => {
    const start = asymptoticRound(modes);
    const curve = twoModes(start + 100, -1);
    const result = assessAsymptoticRate(curve, curve, modes, Q ** (start / 2));
    expect(result.status).toBe('no-clean-window');
    expect(result.note).toMatch(
      /^no clean window: the curve reached its floor or the noise at round \d+/,
    );
  });

  it('fails, as it must, when the start lies mostly along the second mode (|c| = 100 > 1)', () => {
    const start = asymptoticRound(modes);
    const curve = twoModes(start + 100, 100);
    const result = assessAsymptoticRate(curve, curve, modes, NOISE);
    expect(result.status).toBe('asymptotic');
    // The bias scales with c: past twice the tolerance, and the same on the predicted curve.
    expect(logRatio(result.measured!, Q)).toBeGreaterThan(2 * DOMINANCE_TOLERANCE);
    expect(result.predictedOverWindow).toBe(result.measured);
  });

  it('reports no prediction without eigenvalues', () => {
    const curve = twoModes(50, -1);
    expect(assessAsymptoticRate(curve, curve, null, NOISE).status).toBe('no-prediction');
    expect(assessAsymptoticRate(curve, [], modes, NOISE).status).toBe('no-prediction');
  });
});
