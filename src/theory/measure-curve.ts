// What a run's suboptimality curve shows: its linear rate, its floor and the round it reaches a
// target. The curve is a list of (round, f(x) - f*) points in round order, possibly with gaps
// (evaluation every k rounds). Values at or below zero are rounding noise (f is evaluated to a
// few ulps of |f*|) and are expected near the end of a run that converges.
//
// measureFloor: the last quarter of the points (at least FLOOR_POINTS_MIN) is flat when the
// log-linear trend fitted to it changes the level by at most FLAT_SHARE of the curve's whole log
// range, or by at most 1% when that range is small, or by no more than three standard errors of
// the fitted trend (a noisy plateau). The floor is then the median of those points
// (at least 0): robust to the noise around a floor, and what the curve has settled at. Otherwise
// the curve is still descending and there is no floor to report (null).
//
// fitLinearRate: the asymptotic per-round rate q at which the curve approaches its limit,
// f - f* ~ C q^k, or f - f* - F ~ C q^k for a curve with a floor F. For an affine round map with
// spectral radius rho, q is rho^2 when the limit is x* (f - f* is quadratic in the error) and,
// generically, rho when it is not (the gradient at the limit is not zero, so f - F is first
// order in the error); far above a floor the quadratic term dominates and the curve first falls
// at rho^2, so only the last straight part measures the asymptotic rate.
//  1. If the curve has a floor F above the noise level, the fit is on log|f - f* - F|: a curve
//     F +- C q^k is then exactly straight (limits such as FedAvg's are often approached from
//     below, after the curve has crossed its floor). The difference is resolved down to
//     FLOOR_RESOLUTION times the median absolute deviation of the flat points from F (the
//     uncertainty of F), and never below the noise level.
//  2. The usable part runs from the first point up to the first run of UNRESOLVED_RUN_END points
//     at or below that level (below the noise level, without a floor); nothing after it is used,
//     even if the noise climbs back. Single unresolved points before it (a crossing) are skipped.
//  3. A window of at least FIT_POINTS_MIN consecutive usable points is straight when its
//     least-squares line has a residual RMS (in log units) within the straightness tolerance:
//     the larger of the option (default 1e-3, i.e. 0.1%) and three times the noise of the
//     curve, estimated from how far each point lies from the chord of its neighbours (median
//     absolute deviation; for i.i.d. noise sigma that deviation has sd sqrt(1.5) sigma).
//  4. The fitted window is the straight window spanning the most rounds among those that end in
//     the last END_ZONE_SHARE of the usable points (the latest among equals): the asymptotic
//     regime, extended back until a transient or an earlier regime bends it. If no straight
//     window ends there, the longest straight window anywhere is taken.
// The rate is exp(slope) of the final fit; r2 is its coefficient of determination.

import { thin } from '../base/thin.js';
import { TheoryError } from './theory-error.js';

export interface CurvePoint {
  round: number;
  /** f(x) - f* at that round */
  suboptimality: number;
}

export interface CurveOptions {
  /**
   * The absolute level at or below which f - f* is rounding noise (default 1e-13 times the
   * first point's value). A caller that knows f* should pass about 1e3 * eps * max(|f*|, f(x_0) - f*).
   */
  noiseLevel?: number;
  /** residual RMS of log(f - f*) that still counts as straight (default 1e-3) */
  straightness?: number;
}

export interface LinearRateFit {
  /** asymptotic per-round contraction factor of f - f* (or of f - f* - floor) */
  rate: number;
  /** first and last round of the fitted window */
  window: [number, number];
  /** coefficient of determination of the log-linear fit */
  r2: number;
  /** points in the window */
  points: number;
  /** the floor subtracted before the fit (0 when the curve has none above the noise) */
  floor: number;
}

const NOISE_RELATIVE_DEFAULT = 1e-13;
const STRAIGHTNESS_DEFAULT = 1e-3;
const FIT_POINTS_MIN = 4;
const FLOOR_POINTS_MIN = 4;
/** measureFloor's flatness: the tail's trend moves by at most this share of the whole log range ... */
const FLAT_SHARE = 0.02;
/** ... or by at most 1%, whichever is larger */
const FLAT_CHANGE_MIN = Math.log(1.01);
/** A three-standard-error test for a trend in the tail (common practice). */
const TREND_SIGNIFICANCE = 3;
/** f - f* - F is trusted down to this many times the floor's own scatter */
const FLOOR_RESOLUTION = 100;
/** the asymptotic window must end in this last share of the usable points */
const END_ZONE_SHARE = 0.1;
/** this many unresolved points in a row end the usable part */
const UNRESOLVED_RUN_END = 3;
/** a straight window may scatter by this many noise sigmas */
const NOISE_MULTIPLE = 3;
/** 0.6745 is the median of |N(0,1)|: a median absolute deviation over 0.6745 estimates sigma. */
const MAD_TO_SIGMA = 1 / (0.6745 * Math.sqrt(1.5));
/** The window search is quadratic in the points; longer curves are thinned evenly to this many. */
const SEARCH_POINTS_MAX = 2048;

function checkPoints(points: readonly CurvePoint[]): void {
  for (let j = 0; j < points.length; j++) {
    const { round, suboptimality } = points[j];
    if (!Number.isFinite(round))
      throw new TheoryError('E_THEORY_POINTS', `point ${j} has round ${round}`);
    if (j > 0 && !(round > points[j - 1].round)) {
      throw new TheoryError(
        'E_THEORY_POINTS',
        `rounds must increase: point ${j} has round ${round} after ${points[j - 1].round}`,
      );
    }
    if (!Number.isFinite(suboptimality)) {
      throw new TheoryError(
        'E_THEORY_NOT_FINITE',
        `point ${j} (round ${round}) has suboptimality ${suboptimality}`,
      );
    }
  }
}

function noiseLevelOf(points: readonly CurvePoint[], options: CurveOptions): number {
  if (options.noiseLevel !== undefined) {
    if (!(options.noiseLevel >= 0) || !Number.isFinite(options.noiseLevel)) {
      throw new TheoryError(
        'E_THEORY_ARGUMENT',
        `noiseLevel must be finite and >= 0, got ${options.noiseLevel}`,
      );
    }
    return options.noiseLevel;
  }
  return points.length === 0 ? 0 : NOISE_RELATIVE_DEFAULT * Math.max(points[0].suboptimality, 0);
}

export interface LineFit {
  slope: number;
  /** standard error of the slope (0 with fewer than three points) */
  slopeStandardError: number;
  /** sum of squared residuals */
  residualSquares: number;
  /** sum of squared deviations of y from its mean */
  totalSquares: number;
}

/** Least-squares line through (x_j, y_j) for j in [from, to], by the two-pass centered formulas. */
export function fitLine(
  x: ArrayLike<number>,
  y: ArrayLike<number>,
  from: number,
  to: number,
): LineFit {
  const count = to - from + 1;
  let meanX = 0;
  let meanY = 0;
  for (let j = from; j <= to; j++) {
    meanX += x[j];
    meanY += y[j];
  }
  meanX /= count;
  meanY /= count;
  let sxx = 0;
  let sxy = 0;
  let syy = 0;
  for (let j = from; j <= to; j++) {
    const dx = x[j] - meanX;
    const dy = y[j] - meanY;
    sxx += dx * dx;
    sxy += dx * dy;
    syy += dy * dy;
  }
  const slope = sxx > 0 ? sxy / sxx : 0;
  let residualSquares = 0;
  for (let j = from; j <= to; j++) {
    const r = y[j] - meanY - slope * (x[j] - meanX);
    residualSquares += r * r;
  }
  const slopeStandardError =
    count > 2 && sxx > 0 ? Math.sqrt(residualSquares / (count - 2) / sxx) : 0;
  return { slope, slopeStandardError, residualSquares, totalSquares: syy };
}

function median(values: number[]): number {
  const sorted = [...values].sort((a, b) => a - b);
  const middle = sorted.length >> 1;
  return sorted.length % 2 === 1 ? sorted[middle] : 0.5 * (sorted[middle - 1] + sorted[middle]);
}

export interface Floor {
  level: number;
  /** median |f - f* - level| over the flat points: how well the level is known */
  deviation: number;
}

function floorOf(points: readonly CurvePoint[], noise: number): Floor | null {
  const tailCount = Math.max(FLOOR_POINTS_MIN, Math.ceil(points.length / 4));
  if (points.length < 2 * tailCount) return null;
  // Noise at or below zero sits at the noise level for the trend, so that it reads as flat.
  const clampedLog = (s: number) => Math.log(Math.max(s, noise, Number.MIN_VALUE));
  const rounds = points.map((p) => p.round);
  const logs = points.map((p) => clampedLog(p.suboptimality));
  let highest = -Infinity;
  let lowest = Infinity;
  for (const v of logs) {
    highest = Math.max(highest, v);
    lowest = Math.min(lowest, v);
  }
  const from = points.length - tailCount;
  const to = points.length - 1;
  const tail = fitLine(rounds, logs, from, to);
  const span = rounds[to] - rounds[from];
  const tailChange = Math.abs(tail.slope * span);
  // A noisy plateau (compression error, minibatch noise) has a fitted trend that is noise too:
  // a change within TREND_SIGNIFICANCE standard errors is not evidence of descent.
  const trendNoise = TREND_SIGNIFICANCE * tail.slopeStandardError * span;
  if (tailChange > Math.max(FLAT_SHARE * (highest - lowest), FLAT_CHANGE_MIN, trendNoise))
    return null;
  const values = points.slice(from).map((p) => p.suboptimality);
  const level = Math.max(0, median(values));
  return { level, deviation: median(values.map((v) => Math.abs(v - level))) };
}

/** measureFloor's level with the scatter of the flat points around it, or null. */
export function measureFloorSpread(
  points: readonly CurvePoint[],
  options: CurveOptions = {},
): Floor | null {
  checkPoints(points);
  return floorOf(points, noiseLevelOf(points, options));
}

/**
 * The level where the curve has flattened, or null while it is still descending (or has fewer
 * than 2 * FLOOR_POINTS_MIN points). See the file comment for the rule.
 */
export function measureFloor(
  points: readonly CurvePoint[],
  options: CurveOptions = {},
): number | null {
  checkPoints(points);
  return floorOf(points, noiseLevelOf(points, options))?.level ?? null;
}

/** Robust sigma of the log values around a smooth curve: deviation of each point from its neighbours' chord. */
function noiseSigma(x: ArrayLike<number>, y: ArrayLike<number>, count: number): number {
  if (count < 3) return 0;
  const deviations: number[] = [];
  for (let j = 1; j < count - 1; j++) {
    const t = (x[j] - x[j - 1]) / (x[j + 1] - x[j - 1]);
    deviations.push(Math.abs(y[j] - ((1 - t) * y[j - 1] + t * y[j + 1])));
  }
  return MAD_TO_SIGMA * median(deviations);
}

/**
 * The straight window (residual RMS at most `tolerance`) spanning the most rounds among those
 * ending at or after `endFrom`, the latest among equals; null if there is none. Running sums over
 * shifted values make each candidate O(1); the chosen window is refitted with the two-pass formulas.
 */
function longestStraightWindow(
  x: number[],
  y: number[],
  tolerance: number,
  endFrom: number,
): [number, number] | null {
  const n = x.length;
  const x0 = x[0];
  const y0 = y[0];
  const sx = new Float64Array(n + 1);
  const sy = new Float64Array(n + 1);
  const sxx = new Float64Array(n + 1);
  const sxy = new Float64Array(n + 1);
  const syy = new Float64Array(n + 1);
  for (let j = 0; j < n; j++) {
    const dx = x[j] - x0;
    const dy = y[j] - y0;
    sx[j + 1] = sx[j] + dx;
    sy[j + 1] = sy[j] + dy;
    sxx[j + 1] = sxx[j] + dx * dx;
    sxy[j + 1] = sxy[j] + dx * dy;
    syy[j + 1] = syy[j] + dy * dy;
  }
  let best: [number, number] | null = null;
  let bestSpan = -1;
  for (let to = Math.max(endFrom, FIT_POINTS_MIN - 1); to < n; to++) {
    for (let from = 0; from <= to - FIT_POINTS_MIN + 1; from++) {
      const span = x[to] - x[from];
      // The first straight start is the longest window ending here; shorter ones cannot win.
      if (span < bestSpan) break;
      const count = to - from + 1;
      const mx = (sx[to + 1] - sx[from]) / count;
      const my = (sy[to + 1] - sy[from]) / count;
      const cxx = sxx[to + 1] - sxx[from] - count * mx * mx;
      const cxy = sxy[to + 1] - sxy[from] - count * mx * my;
      const cyy = syy[to + 1] - syy[from] - count * my * my;
      const residualSquares = cxx > 0 ? cyy - (cxy * cxy) / cxx : cyy;
      if (residualSquares <= tolerance * tolerance * (count - 2)) {
        best = [from, to];
        bestSpan = span;
        break;
      }
    }
  }
  return best;
}

/**
 * The usable part of the curve (steps 1 and 2 of the file comment): the rounds and
 * log|f - f* - floor| of the points resolved above `resolved`, up to the first run of
 * UNRESOLVED_RUN_END unresolved points.
 */
export function resolvedApproach(
  points: readonly CurvePoint[],
  floor: number,
  resolved: number,
): { rounds: number[]; logs: number[] } {
  // A curve may cross its floor and approach it from below, so with a floor |f - f* - F| is fitted.
  const isResolved = (approach: number) =>
    floor > 0 ? Math.abs(approach) > resolved : approach > resolved;
  const rounds: number[] = [];
  const logs: number[] = [];
  let unresolvedRun = 0;
  for (const { round, suboptimality } of points) {
    const approach = suboptimality - floor;
    if (!isResolved(approach)) {
      // A point or two at a crossing of the floor are skipped; a run of them is the end.
      if (++unresolvedRun >= UNRESOLVED_RUN_END) break;
      continue;
    }
    unresolvedRun = 0;
    rounds.push(round);
    logs.push(Math.log(Math.abs(approach)));
  }
  return { rounds, logs };
}

/** f - f* - F is trusted down to this level for a floor measured with the given scatter. */
export function floorResolution(floor: Floor, noise: number): number {
  return Math.max(noise, FLOOR_RESOLUTION * floor.deviation);
}

/**
 * The asymptotic per-round rate over the last straight part of the curve, or null when no
 * FIT_POINTS_MIN consecutive usable points lie on a straight line. See the file comment for the rule.
 */
export function fitLinearRate(
  points: readonly CurvePoint[],
  options: CurveOptions = {},
): LinearRateFit | null {
  checkPoints(points);
  const straightness = options.straightness ?? STRAIGHTNESS_DEFAULT;
  if (!(straightness > 0) || !Number.isFinite(straightness)) {
    throw new TheoryError(
      'E_THEORY_ARGUMENT',
      `straightness must be positive and finite, got ${straightness}`,
    );
  }
  const noise = noiseLevelOf(points, options);
  const measured = floorOf(points, noise);
  const floor = measured !== null && measured.level > noise ? measured.level : 0;
  const resolved = measured !== null && floor > 0 ? floorResolution(measured, noise) : noise;

  const { rounds, logs } = resolvedApproach(points, floor, resolved);
  if (rounds.length < FIT_POINTS_MIN) return null;

  const x = thin(rounds, SEARCH_POINTS_MAX);
  const y = thin(logs, SEARCH_POINTS_MAX);
  const tolerance = Math.max(straightness, NOISE_MULTIPLE * noiseSigma(x, y, x.length));
  const endFrom = x.length - Math.max(FIT_POINTS_MIN, Math.ceil(END_ZONE_SHARE * x.length));
  const window =
    longestStraightWindow(x, y, tolerance, endFrom) ?? longestStraightWindow(x, y, tolerance, 0);
  if (window === null) return null;
  const [from, to] = window;
  const fit = fitLine(x, y, from, to);
  return {
    rate: Math.exp(fit.slope),
    window: [x[from], x[to]],
    r2: fit.totalSquares > 0 ? 1 - fit.residualSquares / fit.totalSquares : 1,
    points: to - from + 1,
    floor,
  };
}

/** The first round at which f - f* is at or below `target`, or null if the curve never gets there. */
export function roundsToTarget(points: readonly CurvePoint[], target: number): number | null {
  checkPoints(points);
  if (Number.isNaN(target)) throw new TheoryError('E_THEORY_ARGUMENT', 'the target is NaN');
  for (const { round, suboptimality } of points) if (suboptimality <= target) return round;
  return null;
}
