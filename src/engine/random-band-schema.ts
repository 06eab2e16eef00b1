// The shape of outcome.json's `band` (random-band.ts builds it; `report` parses it back), kept
// apart so that run-summary.ts takes the schema without the machinery behind it.

import { z } from 'zod';

const interval = z.tuple([z.number(), z.number()]);

export const randomBandSchema = z.object({
  /** false: no band, for `reason` */
  available: z.boolean(),
  reason: z.string().nullable(),
  replicas: z.number().int().nonnegative(),
  /** how replica r's seed is made */
  replicaSeeds: z.string(),
  /** evaluated rounds (possibly thinned) and, per round, the replicas' mean of f - f* */
  rounds: z.array(z.number().int().nonnegative()),
  mean: z.array(z.number()),
  /** 95% t-interval of the mean */
  meanLow: z.array(z.number()),
  meanHigh: z.array(z.number()),
  /** 2.5th to 97.5th percentile of single replicas: where one run is expected */
  singleRunLow: z.array(z.number()),
  singleRunHigh: z.array(z.number()),
  stationary: z
    .object({
      /** rounds [from, to]: the last quarter */
      window: interval,
      /** the replicas' mean of their time averages over the window, and its two intervals */
      mean: z.number(),
      meanInterval: interval,
      singleRunInterval: interval,
      /** the run's own average of its evaluated f - f* over the window (null: none evaluated) */
      measured: z.number().nullable(),
    })
    .nullable(),
  /** the closed-form stationary E[f - f*] (minibatch gradient descent on least squares) */
  closedForm: z.object({ floor: z.number().nullable(), reason: z.string().nullable() }),
});
export type RandomBand = z.output<typeof randomBandSchema>;
