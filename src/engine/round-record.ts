// What a run records per round (rounds.jsonl) and per client per round (clients.jsonl). The zod
// schemas are the one definition: the types are inferred from them, and `report` parses the
// files back with them (src/report/run-results.ts).

import { z } from 'zod';

const byteCount = z.number().int().nonnegative();
const clientId = z.number().int().nonnegative();
const stepCount = z.number().int().nonnegative();
const seconds = z.number().nonnegative();

export const byteCountsSchema = z.object({ up: byteCount, down: byteCount });
export type ByteCounts = z.infer<typeof byteCountsSchema>;

/** Bytes by layer: payload always; encoded and wire where a network carried the run. */
export const bytesByLayerSchema = z.object({
  payload: byteCountsSchema,
  encoded: byteCountsSchema.optional(),
  wire: byteCountsSchema.optional(),
});

const share = z.number().min(0).max(1);

/** The model on the clients' test parts (src/engine/held-out-evaluation.ts). */
export const heldOutRecordSchema = z.object({
  /** the data loss (no L2 term) averaged over the pooled test rows */
  loss: z.number().nullable(),
  /** classifiers: the share of pooled test rows labelled right; null for least squares */
  accuracy: share.nullable(),
  /** classifiers: each client's own accuracy, as mean, worst (with its client) and best minus worst */
  clientAccuracy: z
    .object({ mean: share, worst: share, worstClientId: clientId, range: share })
    .nullable(),
});
export type HeldOutRecord = z.infer<typeof heldOutRecordSchema>;

export const roundRecordSchema = z.object({
  round: z.number().int().nonnegative(),
  /**
   * f(x) - f*, or null when this round was not evaluated (a non-finite value, in a diverged run,
   * is written as null too: JSON has no NaN or infinity)
   */
  suboptimality: z.number().nullable(),
  /** ||x - x*||, or null when not evaluated (or not finite) */
  distance: z.number().nullable(),
  /**
   * f - f* the theory predicts after this many rounds: the ideal round map (no compression, no
   * drops, the plan's tau_i) iterated from the run's initial model (predicted-trajectory.ts);
   * null when not evaluated, or where the round map is not affine and fixed
   */
  predictedSuboptimality: z.number().nullable(),
  /**
   * test loss and accuracy, where this round was evaluated and the scenario holds out a test
   * part (data.testFraction); absent otherwise, and in records written before it existed
   */
  heldOut: heldOutRecordSchema.optional(),
  bytes: bytesByLayerSchema,
  /** tau_i actually taken in the local-work exchange, by client id (participants only) */
  localSteps: z.record(z.string(), stepCount),
  /** clients whose update did not count (fastest-k, or lost) */
  dropped: z.array(clientId),
  /** modelled length of the round */
  roundSeconds: seconds,
  /** modelled time since the run began, at the round's end */
  virtualSeconds: seconds,
  /** wall-clock time since the run began, at the round's end */
  wallSeconds: seconds,
});
export type RoundRecord = z.infer<typeof roundRecordSchema>;

export const clientRoundRecordSchema = z.object({
  round: z.number().int().nonnegative(),
  exchange: z.string(),
  clientId,
  localSteps: stepCount,
  computeSeconds: seconds,
  waitSeconds: seconds,
  transferSeconds: seconds,
  /**
   * wall clock, distributed: seconds the ups frame carrying this client's up took to arrive at
   * the coordinator's socket, from its first byte to its last (the link's own transfer time)
   */
  upStreamSeconds: seconds.optional(),
  bytes: bytesByLayerSchema,
  dropped: z.boolean(),
});
export type ClientRoundRecord = z.infer<typeof clientRoundRecordSchema>;

/**
 * Where a run's records go as they happen, round by round (round 0, the initial evaluation with
 * no clients, first): a results folder's files (src/results/record-stream.ts) or a caller's own.
 */
export interface RecordSink {
  append(record: RoundRecord, clients: readonly ClientRoundRecord[]): void;
}
