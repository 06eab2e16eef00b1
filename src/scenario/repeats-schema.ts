// The scenario's `repeats` section: how many times `roundwire compare` runs every variant, each
// time with another seed for the run's random choices (speeds, participation, minibatches,
// compression), and at what confidence it reports intervals. `roundwire run` ignores it.

import { z } from 'zod';

export const REPEATS_LIMITS = {
  /** repeats of one variant */
  countMax: 100,
  /** runs of one comparison: variants times repeats */
  runsMax: 1000,
  /** the confidence of intervals, two-sided */
  confidenceMin: 0.5,
  confidenceMax: 0.999,
} as const;

export const REPEATS_DEFAULTS = { count: 1, redrawData: false, confidence: 0.95 } as const;

export const repeatsSchema = z
  .object({
    /** runs of every variant; repeat r of every variant uses the same seeds (a paired design) */
    count: z.number().int().min(1).max(REPEATS_LIMITS.countMax),
    /** true: the data's seed varies with the repeat as well; false: the data stays fixed */
    redrawData: z.boolean().default(REPEATS_DEFAULTS.redrawData),
    /** two-sided confidence of every interval and of the verdict */
    confidence: z
      .number()
      .min(REPEATS_LIMITS.confidenceMin)
      .max(REPEATS_LIMITS.confidenceMax)
      .default(REPEATS_DEFAULTS.confidence),
  })
  .strict();

export type ScenarioRepeats = z.output<typeof repeatsSchema>;
