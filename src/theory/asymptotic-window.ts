// The measured rate where the theory says it is asymptotic, beside the predicted trajectory's rate
// over the very same rounds.
//
// Where the asymptote begins. For an affine round map with eigenvalues |lambda_1| = rho >
// |lambda_2| >= ..., the curve's distance to its limit is a sum of modes:
//   limit x*:      f - f* = C1 rho^(2k) + C2 (rho |lambda_2|)^k + ...   (quadratic in the error)
//   limit not x*:  f - F  = C1 rho^k + C2 |lambda_2|^k + C3 rho^(2k) + ... (linear, then quadratic)
// so log(f - limit) = log C1 + k log q + log(1 + c r^k + ...), with q the leading rate and each
// later mode at ratio r < 1 to it and relative weight c. A rate is the slope of that line, and
// the mode at ratio r moves the local slope by c r^k log(r) / (1 + c r^k), at most
// |c| r^k |log r| / (1 - |c| r^k). The leading mode dominates, for the rate, from the first round
// at which that bias is at most DOMINANCE_TOLERANCE (2%) of |log q| for every later mode: then
// the fitted slope over any window after it is within 2% of log q, 0.4 of the 5% the rate
// comparison allows, leaving room for a weight c up to about 2.5 times the assumed one. (At 1%
// the window begins after most bundled curves have reached the rounding noise.)
//
// The assumption. The weights c are unknown (they are the initial error's components along
// eigenvectors nobody computed), so |c| <= 1 is assumed: at round 0 no later mode carries more
// of f - limit than the leading one. It fails when the start lies mostly along faster modes
// (test/theory/asymptotic-window.test.ts shows a case). On a run the predicted trajectory's rate
// over the window, reported beside the measured one, shows such a failure: the two agree with
// each other, and both stray from the asymptotic rate by more than the tolerance. Under it, with
// a = tol |log q| / |log r|, the bias is within tolerance once r^k <= a / (1 + a), i.e. from
// round ceil(log(a / (1 + a)) / log r). That round grows as r tends to 1 but stays below
// 1 / (tol |log q|): a second mode almost as slow as the first barely bends the line.
//
// Which ratios: |lambda_2| is the subdominant Ritz value of the rate's Arnoldi run (arnoldi.ts)
// when its relative residual is at most SUBDOMINANT_RESIDUAL_TRUSTED. A Ritz value with a larger
// residual need not be near any eigenvalue of a non-normal M (FedSplit's round map on the
// local-steps scenario gives 0.48 with residual 0.3 where the curve shows a mode near 0.95), so
// then |lambda_2| counts as unknown and the worst case over r in (0, 1) is taken: the supremum of
// the round above, 1 / (tol |log q|). Limit x*: r = |lambda_2| / rho. Limit not x*: r = |lambda_2|
// / rho and r = rho (the quadratic term against the linear one). A dominant complex pair or +-r pair
// makes the leading mode itself oscillate around the line; the window's fit averages over it.
//
// The window runs from that round to the last round both curves resolve above their floor (or
// the noise): see measure-curve.ts, steps 1 and 2. The rate is exp(slope) of the least-squares
// line through log|f - limit| there, and its standard error is rate times the slope's standard
// error (the delta method). When the window does not exist, the later half of the usable rounds
// is fitted instead (both curves alike), and the status says why it is not asymptotic.

import {
  fitLine,
  floorResolution,
  measureFloorSpread,
  resolvedApproach,
  type CurvePoint,
} from './measure-curve.js';
import { TheoryError } from './theory-error.js';

/** The later modes may move the fitted log-slope by at most this share of log q (see above). */
export const DOMINANCE_TOLERANCE = 0.02;
/**
 * A subdominant Ritz value is trusted as |lambda_2| up to this residual relative to rho: its
 * error is about the residual times its eigenvector's condition number, and 1e-6 leaves six
 * digits of room for that number while the rounds it decides change by well under one percent.
 */
export const SUBDOMINANT_RESIDUAL_TRUSTED = 1e-6;
/** A window needs this many evaluated rounds for a line and its standard error. */
export const WINDOW_POINTS_MIN = 4;

/**
 * What a run's window is: 'asymptotic' (it lies where the leading mode dominates),
 * 'not-yet-asymptotic' (the run stopped before the asymptotic round; more rounds would reach it),
 * 'no-clean-window' (the curve reached its floor or the noise before the asymptotic round),
 * 'no-prediction' (no eigenvalues, or no predicted trajectory).
 */
export const ASYMPTOTIC_STATUSES = [
  'asymptotic',
  'not-yet-asymptotic',
  'no-clean-window',
  'no-prediction',
] as const;
export type AsymptoticStatus = (typeof ASYMPTOTIC_STATUSES)[number];

/** What the prediction tells the window. */
export interface ModeEstimate {
  /** rho of the round map's linear part */
  spectralRadius: number;
  /** rho^2 when the limit is x*, rho otherwise (predict-run.ts) */
  rate: number;
  /** |lambda_2| and its Ritz residual relative to rho, or null when none was seen */
  subdominantModulus: number | null;
  subdominantRelativeResidual: number | null;
  /** f(limit) - f* */
  floor: number;
}

export interface AsymptoticRate {
  status: AsymptoticStatus;
  /** the status in words, with the rounds it needs or the round the floor came */
  note: string;
  /** DOMINANCE_TOLERANCE, as used */
  tolerance: number;
  /** the round from which the leading mode dominates the slope, or null without a prediction */
  asymptoticRound: number | null;
  /** rounds a run needs for an asymptotic window (null without a prediction) */
  roundsNeeded: number | null;
  /** the fitted rounds, the same for both curves (null when fewer than WINDOW_POINTS_MIN) */
  window: [number, number] | null;
  /** exp(slope) of log|f - limit| over the window, on the measured curve */
  measured: number | null;
  measuredStandardError: number | null;
  /** the same fit over the same window on the predicted trajectory */
  predictedOverWindow: number | null;
  predictedOverWindowStandardError: number | null;
}

/** The first round from which a mode at ratio `ratio` moves the slope of log q by at most `tolerance`. */
export function dominanceRound(leadingRate: number, ratio: number, tolerance: number): number {
  if (!(leadingRate > 0 && leadingRate < 1))
    throw new TheoryError(
      'E_THEORY_ARGUMENT',
      `the leading rate must be in (0, 1), got ${leadingRate}`,
    );
  if (!(ratio >= 0 && ratio <= 1))
    throw new TheoryError('E_THEORY_ARGUMENT', `a mode ratio must be in [0, 1], got ${ratio}`);
  if (!(tolerance > 0 && tolerance < 1))
    throw new TheoryError('E_THEORY_ARGUMENT', `the tolerance must be in (0, 1), got ${tolerance}`);
  // r = 0: the mode is gone after round 0; r = 1: it decays with the leading one and bends nothing.
  if (ratio === 0 || ratio === 1) return 0;
  const a = (tolerance * Math.abs(Math.log(leadingRate))) / Math.abs(Math.log(ratio));
  return Math.max(0, Math.ceil(Math.log(a / (1 + a)) / Math.log(ratio)));
}

/**
 * The ratios of the later modes of f - limit to the leading one (see the file comment); a null
 * ratio is a mode whose eigenvalue is unknown.
 */
export function modeRatios(modes: ModeEstimate): {
  leadingRate: number;
  ratios: (number | null)[];
} {
  const rho = modes.spectralRadius;
  const limitIsOptimum = Math.abs(modes.rate - rho * rho) < Math.abs(modes.rate - rho);
  const trusted =
    modes.subdominantRelativeResidual !== null &&
    modes.subdominantRelativeResidual <= SUBDOMINANT_RESIDUAL_TRUSTED;
  // No other Ritz value at all: the moving range holds the dominant mode alone.
  const second =
    modes.subdominantModulus === null
      ? 0
      : trusted && rho > 0
        ? Math.min(1, modes.subdominantModulus / rho)
        : null;
  const ratios = [second];
  if (!limitIsOptimum) ratios.push(rho);
  return { leadingRate: modes.rate, ratios };
}

/** The asymptotic round for `modes` at `tolerance`. */
export function asymptoticRound(modes: ModeEstimate, tolerance = DOMINANCE_TOLERANCE): number {
  const { leadingRate, ratios } = modeRatios(modes);
  const worstCase = Math.ceil(1 / (tolerance * Math.abs(Math.log(leadingRate))));
  return Math.max(
    ...ratios.map((r) => (r === null ? worstCase : dominanceRound(leadingRate, r, tolerance))),
  );
}

interface Approach {
  rounds: number[];
  logs: number[];
  /** the curve went on below its resolution after its last usable round */
  reachedFloor: boolean;
}

function approachOf(points: readonly CurvePoint[], floor: number, resolution: number): Approach {
  const { rounds, logs } = resolvedApproach(points, floor, resolution);
  const lastRound = points.length === 0 ? -Infinity : points[points.length - 1].round;
  const reachedFloor = rounds.length > 0 && rounds[rounds.length - 1] < lastRound;
  return { rounds, logs, reachedFloor };
}

/**
 * The measured curve's floor: its own flat level, or the predicted floor where the measured one
 * cannot be told apart from it (its scatter covers the difference), since that one is exact.
 */
function measuredFloorOf(
  points: readonly CurvePoint[],
  predictedFloor: number,
  noiseLevel: number,
): { level: number; resolution: number } {
  const measured = measureFloorSpread(points, { noiseLevel });
  const predictedLevel = predictedFloor > noiseLevel ? predictedFloor : 0;
  if (measured === null || !(measured.level > noiseLevel))
    return { level: predictedLevel, resolution: noiseLevel };
  const resolution = floorResolution(measured, noiseLevel);
  if (Math.abs(measured.level - predictedLevel) <= resolution)
    return { level: predictedLevel, resolution: noiseLevel };
  return { level: measured.level, resolution };
}

/** The fit over [from, to], or null where the curve resolves fewer than WINDOW_POINTS_MIN points there. */
function fitOver(
  approach: Approach,
  from: number,
  to: number,
): { rate: number; standardError: number } | null {
  const x: number[] = [];
  const y: number[] = [];
  approach.rounds.forEach((round, j) => {
    if (round >= from && round <= to) {
      x.push(round);
      y.push(approach.logs[j]);
    }
  });
  if (x.length < WINDOW_POINTS_MIN) return null;
  const line = fitLine(x, y, 0, x.length - 1);
  const rate = Math.exp(line.slope);
  return { rate, standardError: rate * line.slopeStandardError };
}

function noWindow(status: AsymptoticStatus, note: string): AsymptoticRate {
  return {
    status,
    note,
    tolerance: DOMINANCE_TOLERANCE,
    asymptoticRound: null,
    roundsNeeded: null,
    window: null,
    measured: null,
    measuredStandardError: null,
    predictedOverWindow: null,
    predictedOverWindowStandardError: null,
  };
}

/**
 * The measured and predicted rates over the asymptotic window of a run (see the file comment).
 * `measured` and `predicted` are the run's f - f* and its predicted trajectory's, in round order;
 * `modes` is null without a prediction; `noiseLevel` is the level of f - f* that is rounding.
 */
export function assessAsymptoticRate(
  measured: readonly CurvePoint[],
  predicted: readonly CurvePoint[],
  modes: ModeEstimate | null,
  noiseLevel: number,
): AsymptoticRate {
  if (modes === null)
    return noWindow('no-prediction', 'no prediction: no eigenvalues to place the window');
  if (predicted.length < WINDOW_POINTS_MIN)
    return noWindow('no-prediction', 'no prediction: the run recorded no predicted trajectory');
  if (!(modes.rate > 0 && modes.rate < 1))
    return noWindow(
      'no-prediction',
      `no window: the predicted rate ${modes.rate} is not in (0, 1): the limit is reached at once, or never`,
    );
  const start = asymptoticRound(modes);
  const floor = measuredFloorOf(measured, modes.floor, noiseLevel);
  const measuredApproach = approachOf(measured, floor.level, floor.resolution);
  const predictedFloor = modes.floor > noiseLevel ? modes.floor : 0;
  const predictedApproach = approachOf(predicted, predictedFloor, noiseLevel);
  const spacing =
    measured.length > 1
      ? measured[measured.length - 1].round - measured[measured.length - 2].round
      : 1;
  const roundsNeeded = start + (WINDOW_POINTS_MIN - 1) * spacing;
  const common = { tolerance: DOMINANCE_TOLERANCE, asymptoticRound: start, roundsNeeded };

  const ends = [measuredApproach.rounds, predictedApproach.rounds].map((r) =>
    r.length === 0 ? -Infinity : r[r.length - 1],
  );
  const end = Math.min(...ends);
  const inWindow = measuredApproach.rounds.filter((r) => r >= start && r <= end).length;
  let status: AsymptoticStatus;
  let note: string;
  let from = start;
  if (inWindow >= WINDOW_POINTS_MIN) {
    status = 'asymptotic';
    note = `asymptotic from round ${start}`;
  } else {
    const reachedFloor = measuredApproach.reachedFloor || predictedApproach.reachedFloor;
    status = reachedFloor ? 'no-clean-window' : 'not-yet-asymptotic';
    note = reachedFloor
      ? `no clean window: the curve reached its floor or the noise at round ${end}, before the asymptotic round ${start}`
      : `not yet asymptotic (needs about ${roundsNeeded} rounds)`;
    // Pre-asymptotic, but still like with like: the later half of the usable rounds.
    const usable = measuredApproach.rounds.filter((r) => r <= end);
    from = usable.length === 0 ? end : usable[Math.floor(usable.length / 2)];
  }
  const points = measuredApproach.rounds.filter((r) => r >= from && r <= end);
  if (points.length < WINDOW_POINTS_MIN) return { ...noWindow(status, note), ...common };
  const window: [number, number] = [points[0], points[points.length - 1]];
  const measuredFit = fitOver(measuredApproach, window[0], window[1]);
  const predictedFit = fitOver(predictedApproach, window[0], window[1]);
  return {
    status,
    note,
    ...common,
    window,
    measured: measuredFit?.rate ?? null,
    measuredStandardError: measuredFit?.standardError ?? null,
    predictedOverWindow: predictedFit?.rate ?? null,
    predictedOverWindowStandardError: predictedFit?.standardError ?? null,
  };
}
