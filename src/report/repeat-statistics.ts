// The statistics of one figure over the repeats of a variant: mean, standard deviation and a
// confidence interval of the mean. The interval is Student's t-interval, unless the sample is
// skewed and large enough for resampling, where a percentile bootstrap interval follows the skew
// instead of forcing a symmetric one. A repeat without the figure (target not reached, diverged,
// failed) is counted as missing and left out, never averaged in as a number.

import { Rng } from '../base/rng.js';
import { studentTQuantile } from './student-t.js';

export type IntervalMethod = 't' | 'bootstrap' | 'none';

export interface FigureStatistics {
  /** repeats that have the figure */
  n: number;
  /** repeats without it: target not reached, diverged or failed */
  missing: number;
  mean: number | null;
  /** sample standard deviation (n - 1 in the denominator); null below 2 values */
  sd: number | null;
  lower: number | null;
  upper: number | null;
  /** how the interval was made; "none" below 2 values */
  method: IntervalMethod;
}

/**
 * The rule that chooses the bootstrap: at least this many values and a sample skewness beyond
 * this magnitude ("highly skewed" beyond 1 is common practice; below 10 values a percentile
 * bootstrap has too few distinct resamples to trust, so the t-interval stays).
 */
export const BOOTSTRAP_RULE = { samplesMin: 10, skewnessMin: 1 } as const;
/** Resamples of a bootstrap interval (common practice: 1000 to 10 000 for percentile intervals). */
export const BOOTSTRAP_RESAMPLES = 2000;
/** The bootstrap's own stream, fixed so that a comparison's numbers repeat. */
const BOOTSTRAP_SEED = 14;

export function meanOf(values: readonly number[]): number {
  let sum = 0;
  for (const v of values) sum += v;
  return sum / values.length;
}

export function sampleStandardDeviation(values: readonly number[]): number {
  const mean = meanOf(values);
  let squares = 0;
  for (const v of values) squares += (v - mean) ** 2;
  return Math.sqrt(squares / (values.length - 1));
}

/** The adjusted Fisher-Pearson skewness G1; 0 for a sample without spread. */
export function sampleSkewness(values: readonly number[]): number {
  const n = values.length;
  const mean = meanOf(values);
  let m2 = 0;
  let m3 = 0;
  for (const v of values) {
    m2 += (v - mean) ** 2 / n;
    m3 += (v - mean) ** 3 / n;
  }
  if (m2 === 0) return 0;
  return ((m3 / m2 ** 1.5) * Math.sqrt(n * (n - 1))) / (n - 2);
}

/** mean -/+ t_{(1+c)/2, n-1} sd / sqrt(n). */
export function tInterval(values: readonly number[], confidence: number): [number, number] {
  const mean = meanOf(values);
  const half =
    (studentTQuantile((1 + confidence) / 2, values.length - 1) * sampleStandardDeviation(values)) /
    Math.sqrt(values.length);
  return [mean - half, mean + half];
}

/** The q-quantile of sorted values, linear between order statistics (common practice). */
function quantileSorted(sorted: Float64Array, q: number): number {
  const position = q * (sorted.length - 1);
  const below = Math.floor(position);
  const above = Math.min(sorted.length - 1, below + 1);
  return sorted[below] + (position - below) * (sorted[above] - sorted[below]);
}

/** The percentile bootstrap interval of the mean: the (1-c)/2 and (1+c)/2 quantiles of resampled means. */
export function bootstrapInterval(
  values: readonly number[],
  confidence: number,
  rng: Rng = Rng.derive(BOOTSTRAP_SEED, 'bootstrap'),
  resamples: number = BOOTSTRAP_RESAMPLES,
): [number, number] {
  const n = values.length;
  const means = new Float64Array(resamples);
  for (let b = 0; b < resamples; b++) {
    let sum = 0;
    for (let i = 0; i < n; i++) sum += values[rng.nextInt(n)];
    means[b] = sum / n;
  }
  means.sort();
  return [quantileSorted(means, (1 - confidence) / 2), quantileSorted(means, (1 + confidence) / 2)];
}

/** BOOTSTRAP_RULE applied to a sample of at least 2 values. */
export function intervalMethodFor(values: readonly number[]): 't' | 'bootstrap' {
  return values.length >= BOOTSTRAP_RULE.samplesMin &&
    Math.abs(sampleSkewness(values)) > BOOTSTRAP_RULE.skewnessMin
    ? 'bootstrap'
    : 't';
}

/** The statistics of one figure; `values` holds one entry a repeat, null where it is missing. */
export function figureStatistics(
  values: readonly (number | null)[],
  confidence: number,
): FigureStatistics {
  const present = values.filter((v): v is number => v !== null && Number.isFinite(v));
  const missing = values.length - present.length;
  const n = present.length;
  if (n === 0)
    return { n, missing, mean: null, sd: null, lower: null, upper: null, method: 'none' };
  const mean = meanOf(present);
  if (n === 1) return { n, missing, mean, sd: null, lower: null, upper: null, method: 'none' };
  const method = intervalMethodFor(present);
  const [lower, upper] =
    method === 'bootstrap'
      ? bootstrapInterval(present, confidence)
      : tInterval(present, confidence);
  return { n, missing, mean, sd: sampleStandardDeviation(present), lower, upper, method };
}
