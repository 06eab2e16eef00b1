// outcome.json: what a run measured, beside what the theory predicted. The same function serves
// the in-process engine and the coordinator, so both write the same fields.

import { z } from 'zod';
import type { PlanTheory } from '../theory/plan-theory.js';
import { methodSchema, timingSchema } from '../scenario/schema.js';
import { fitLinearRate, measureFloor, type CurvePoint } from '../theory/measure-curve.js';
import {
  boundInputsFor,
  publishedBoundSchema,
  publishedBounds,
} from '../theory/published-bounds.js';
import {
  ASYMPTOTIC_STATUSES,
  assessAsymptoticRate,
  type ModeEstimate,
} from '../theory/asymptotic-window.js';
import type { RunPlan } from './run-plan.js';
import {
  bytesByLayerSchema,
  heldOutRecordSchema,
  type ByteCounts,
  type HeldOutRecord,
  type RoundRecord,
} from './round-record.js';
import type { RunPrediction } from './predict-run.js';
import { randomBandSchema } from './random-band-schema.js';

/** Why a run ended: its target, its round limit, a non-finite update, every worker lost, or Ctrl-C. */
export const stopReasonSchema = z.enum([
  'target-reached',
  'rounds-complete',
  'diverged',
  'workers-lost',
  'stopped',
]);
export type StopReason = z.infer<typeof stopReasonSchema>;

/**
 * What every run hands over at its end, whichever runtime ran it (the coordinator's adds to it).
 * Its records are not in it: they went to a RecordSink as they happened (rounds.jsonl and
 * clients.jsonl), and the summary reads the rounds back from there.
 */
export interface RunOutcomeBase {
  plan: RunPlan;
  theory: PlanTheory;
  finalModel: Float64Array;
  stopReason: StopReason;
  wallSeconds: number;
}

/** What outcome.json is built from: the run, and the network's counts where a network carried it. */
export interface RunOutcome extends RunOutcomeBase {
  /** encoded and wire layers, where a network carried the run */
  bytesLayers?: { encoded: ByteCounts; wire: ByteCounts };
  /** workers marked lost during the run */
  lostWorkers?: string[];
  /** invalid messages received, by error code */
  protocolErrors?: Record<string, number>;
}

/**
 * A number that may be NaN or infinite in memory (a diverged run, mu = 0): JSON.stringify writes
 * those as null, and they read back as NaN, which every table shows as missing.
 */
const maybeNonFinite = z
  .number()
  .nullable()
  .transform((value) => value ?? Number.NaN);

/**
 * outcome.json. The schema is the one definition: RunSummary is its output type, and `report`
 * parses the file with it. Other members (a distributed run's details) pass unread.
 */
export const runSummarySchema = z.object({
  scenario: z.string(),
  method: methodSchema.shape.name,
  planHash: z.string(),
  problemHash: z.string(),
  runtime: z.enum(['in-process', 'distributed']),
  clock: timingSchema.shape.clock.unwrap(),
  stopReason: stopReasonSchema,
  rounds: z.number().int().nonnegative(),
  clients: z.number().int().positive(),
  stepSize: z.number(),
  suboptimality: z.object({ initial: z.number(), final: maybeNonFinite }),
  distance: z.object({ initial: maybeNonFinite, final: maybeNonFinite }),
  rate: z.object({
    measured: z.number().nullable(),
    predicted: z.number().nullable(),
    measuredWindow: z.tuple([z.number(), z.number()]).nullable(),
    /** the rate over the window where the leading mode dominates (theory/asymptotic-window.ts) */
    asymptotic: z.object({
      status: z.enum(ASYMPTOTIC_STATUSES),
      note: z.string(),
      tolerance: z.number(),
      asymptoticRound: z.number().int().nonnegative().nullable(),
      roundsNeeded: z.number().int().nonnegative().nullable(),
      window: z.tuple([z.number(), z.number()]).nullable(),
      measured: z.number().nullable(),
      measuredStandardError: z.number().nullable(),
      predictedOverWindow: z.number().nullable(),
      predictedOverWindowStandardError: z.number().nullable(),
    }),
  }),
  floor: z.object({ measured: z.number().nullable(), predicted: z.number().nullable() }),
  /** published rate bounds for the method, each with its conditions and source (published-bounds.ts) */
  bounds: z.array(publishedBoundSchema).default([]),
  prediction: z.object({
    available: z.boolean(),
    /**
     * exact: the round map is affine (quadratic losses); local: linearized at its limit, an
     * asymptotic rate that holds once the run is near the limit; null: no spectral radius
     */
    kind: z.enum(['exact', 'local']).nullable().default(null),
    reason: z.string().nullable(),
    spectralRadius: z.number().nullable(),
    /** |lambda_2| of the round map and its Ritz residual relative to rho (predict-rate.ts) */
    subdominantModulus: z.number().nullable(),
    subdominantRelativeResidual: z.number().nullable(),
    limitDistance: z.number().nullable(),
  }),
  target: z.number(),
  roundsToTarget: z.number().int().nonnegative().nullable(),
  toTarget: z.object({
    payloadBytes: z.number().nullable(),
    virtualSeconds: z.number().nullable(),
    wallSeconds: z.number().nullable(),
  }),
  /**
   * runs that hold out a test part: the last evaluated round's test loss and accuracy, and the
   * first round whose pooled test accuracy reached run.targetAccuracy, with what it had cost;
   * absent otherwise, and in outcomes written before it existed
   */
  heldOut: z
    .object({
      final: heldOutRecordSchema,
      targetAccuracy: z.number().nullable(),
      roundsToTargetAccuracy: z.number().int().nonnegative().nullable(),
      toTargetAccuracy: z.object({
        payloadBytes: z.number().nullable(),
        virtualSeconds: z.number().nullable(),
        wallSeconds: z.number().nullable(),
      }),
    })
    .optional(),
  bytes: bytesByLayerSchema,
  /** wall: from the first round; join (distributed runs): waiting for workers before it */
  seconds: z.object({ virtual: z.number(), wall: z.number(), join: z.number().optional() }),
  droppedUpdates: z.number().int().nonnegative(),
  lostWorkers: z.array(z.string()),
  protocolErrors: z.record(z.string(), z.number().int().nonnegative()),
  theory: z.object({
    /** NaN (null) for a nonconvex objective, which has no L or mu */
    smoothness: maybeNonFinite,
    strongConvexity: maybeNonFinite,
    /** smoothness / strongConvexity: infinite when mu = 0 */
    conditionNumber: maybeNonFinite,
    heterogeneity: z.number(),
    /** f*, or for a nonconvex objective the reference loss (see `reference`) */
    optimumLoss: z.number(),
    /** ||grad f|| at x*, or at the reference point */
    certificate: z.number(),
    /**
     * present for a nonconvex objective: optimumLoss is then the end of a reference run, not an
     * optimum, `suboptimality` is the gap to it (negative below it) and there is no distance
     */
    reference: z
      .object({
        iterationsMax: z.number().int().positive(),
        ending: z.enum(['budget', 'stationary', 'no-decrease']),
      })
      .nullable()
      .optional(),
  }),
  /** runs with random rounds only: the Monte Carlo band and closed form (random-band.ts) */
  band: randomBandSchema.optional(),
});
export type RunSummary = z.output<typeof runSummarySchema>;

/** The evaluated points of a run, cut before the first non-finite one (a diverged run). */
export function curveOf(rounds: Iterable<RoundRecord>): CurvePoint[] {
  const points: CurvePoint[] = [];
  for (const r of rounds) {
    if (r.suboptimality === null) continue;
    if (!Number.isFinite(r.suboptimality)) break;
    points.push({ round: r.round, suboptimality: r.suboptimality });
  }
  return points;
}

/** What the summary takes from a run's rounds, gathered in one pass in round order. */
interface RoundsDigest {
  /**
   * Every evaluated point up to the first non-finite one. Kept whole, not thinned: the rate and
   * floor fits look at every point (the floor at the last quarter, the fit's noise estimate at
   * each point's neighbours), and the summary must give the very values it gave when the rounds
   * were held in memory. It is built once, at the end, from rounds.jsonl: its size is bounded by
   * the file, and nothing of it is held while the run goes on.
   */
  curve: CurvePoint[];
  /** the predicted trajectory's points, cut the same way */
  predictedCurve: CurvePoint[];
  first: RoundRecord;
  last: RoundRecord;
  /** the last distance evaluated (NaN if none) */
  finalDistance: number;
  /** the first round whose evaluation is at or below the target (> 0), with what it had cost */
  reached: { record: RoundRecord; payloadBytes: number } | null;
  /** the last held-out evaluation (null if none) */
  finalHeldOut: HeldOutRecord | null;
  /** the first round whose pooled test accuracy is at or above the target accuracy */
  reachedAccuracy: { record: RoundRecord; payloadBytes: number } | null;
  payload: ByteCounts;
  dropped: number;
}

function digestRounds(
  rounds: Iterable<RoundRecord>,
  target: number,
  targetAccuracy: number | null,
): RoundsDigest {
  const curve: CurvePoint[] = [];
  const predictedCurve: CurvePoint[] = [];
  let curveCut = false;
  let first: RoundRecord | null = null;
  let last: RoundRecord | null = null;
  let finalDistance = Number.NaN;
  let reached: RoundsDigest['reached'] = null;
  let finalHeldOut: HeldOutRecord | null = null;
  let reachedAccuracy: RoundsDigest['reachedAccuracy'] = null;
  const payload = { up: 0, down: 0 };
  let payloadTotal = 0;
  let dropped = 0;
  for (const r of rounds) {
    first ??= r;
    last = r;
    payload.up += r.bytes.payload.up;
    payload.down += r.bytes.payload.down;
    payloadTotal += r.bytes.payload.up + r.bytes.payload.down;
    dropped += r.dropped.length;
    if (r.distance !== null) finalDistance = r.distance;
    if (r.heldOut !== undefined) {
      finalHeldOut = r.heldOut;
      const accuracy = r.heldOut.accuracy;
      if (
        reachedAccuracy === null &&
        targetAccuracy !== null &&
        accuracy !== null &&
        accuracy >= targetAccuracy
      )
        reachedAccuracy = { record: r, payloadBytes: payloadTotal };
    }
    if (r.suboptimality === null || curveCut) continue;
    if (!Number.isFinite(r.suboptimality)) {
      curveCut = true;
      continue;
    }
    curve.push({ round: r.round, suboptimality: r.suboptimality });
    if (r.predictedSuboptimality !== null && Number.isFinite(r.predictedSuboptimality))
      predictedCurve.push({ round: r.round, suboptimality: r.predictedSuboptimality });
    if (reached === null && target > 0 && r.suboptimality <= target)
      reached = { record: r, payloadBytes: payloadTotal };
  }
  if (first === null || last === null)
    throw new RangeError('buildRunSummary: a run has at least its round 0');
  return {
    curve,
    predictedCurve,
    first,
    last,
    finalDistance,
    reached,
    finalHeldOut,
    reachedAccuracy,
    payload,
    dropped,
  };
}

/** The summary's heldOut field: absent when no round scored a test part. */
function heldOutSummary(
  digest: RoundsDigest,
  targetAccuracy: number | null,
): Pick<RunSummary, 'heldOut'> {
  if (digest.finalHeldOut === null) return {};
  const reached = digest.reachedAccuracy;
  return {
    heldOut: {
      final: digest.finalHeldOut,
      targetAccuracy,
      roundsToTargetAccuracy: reached === null ? null : reached.record.round,
      toTargetAccuracy: {
        payloadBytes: reached === null ? null : reached.payloadBytes,
        virtualSeconds: reached === null ? null : reached.record.virtualSeconds,
        wallSeconds: reached === null ? null : reached.record.wallSeconds,
      },
    },
  };
}

/** What the asymptotic window needs of a prediction, or null where it lacks the rate or the floor. */
function modeEstimateOf(prediction: RunPrediction): ModeEstimate | null {
  const { spectralRadius, rate, floor } = prediction;
  if (spectralRadius === null || rate === null || floor === null) return null;
  return {
    spectralRadius,
    rate,
    floor,
    subdominantModulus: prediction.subdominantModulus,
    subdominantRelativeResidual: prediction.subdominantRelativeResidual,
  };
}

/** outcome.json's fields from the run's end and its rounds (round 0 first, in round order, read once). */
export function buildRunSummary(
  outcome: RunOutcome,
  rounds: Iterable<RoundRecord>,
  prediction: RunPrediction,
  runtime: RunSummary['runtime'],
): RunSummary {
  const { plan, theory } = outcome;
  const target = plan.scenario.run.target;
  const targetAccuracy = plan.scenario.run.targetAccuracy ?? null;
  const digest = digestRounds(rounds, target, targetAccuracy);
  const { curve } = digest;
  const first = curve[0];
  const last = curve[curve.length - 1];
  // f is evaluated to a few ulps of its scale; below that the curve is noise (common practice).
  const noiseLevel =
    1e3 * Number.EPSILON * Math.max(Math.abs(theory.optimum.loss), first.suboptimality);
  // A gap to a reference may be negative and follows no linear-rate theory: nothing is fitted.
  const fitted = curve.length > 1 && theory.reference === null;
  const fit = fitted ? fitLinearRate(curve, { noiseLevel }) : null;
  const asymptotic = assessAsymptoticRate(
    curve,
    digest.predictedCurve,
    modeEstimateOf(prediction),
    noiseLevel,
  );
  const reached = digest.reached;
  const lastRound = digest.last;
  const c = theory.constants;
  return {
    scenario: plan.scenario.name,
    method: plan.scenario.method.name,
    planHash: plan.planHash,
    problemHash: theory.problemHash,
    runtime,
    clock: plan.scenario.timing.clock,
    stopReason: outcome.stopReason,
    rounds: lastRound.round,
    clients: plan.clientCount,
    stepSize: plan.methodConfig.stepSize,
    suboptimality: {
      initial: first.suboptimality,
      final: lastRound.suboptimality ?? last.suboptimality,
    },
    distance: {
      initial: digest.first.distance ?? Number.NaN,
      final: digest.finalDistance,
    },
    rate: {
      measured: fit ? fit.rate : null,
      predicted: prediction.rate,
      measuredWindow: fit ? fit.window : null,
      asymptotic,
    },
    floor: {
      measured: fitted ? measureFloor(curve, { noiseLevel }) : null,
      predicted: prediction.floor,
    },
    bounds: publishedBounds(
      boundInputsFor(
        plan.scenario,
        { dim: plan.dim, plannedSteps: plan.plannedSteps, stepSize: plan.methodConfig.stepSize },
        c,
      ),
    ),
    prediction: {
      available: prediction.unavailableReason === null,
      kind: prediction.kind,
      reason: prediction.unavailableReason,
      spectralRadius: prediction.spectralRadius,
      subdominantModulus: prediction.subdominantModulus,
      subdominantRelativeResidual: prediction.subdominantRelativeResidual,
      limitDistance: prediction.limitDistance,
    },
    target,
    roundsToTarget: reached === null ? null : reached.record.round,
    toTarget: {
      payloadBytes: reached === null ? null : reached.payloadBytes,
      virtualSeconds: reached === null ? null : reached.record.virtualSeconds,
      wallSeconds: reached === null ? null : reached.record.wallSeconds,
    },
    ...heldOutSummary(digest, targetAccuracy),
    bytes: { payload: digest.payload, ...(outcome.bytesLayers ?? {}) },
    seconds: { virtual: lastRound.virtualSeconds, wall: outcome.wallSeconds },
    droppedUpdates: digest.dropped,
    lostWorkers: outcome.lostWorkers ?? [],
    protocolErrors: outcome.protocolErrors ?? {},
    theory: {
      smoothness: c.smoothness,
      strongConvexity: c.strongConvexity,
      conditionNumber: c.conditionNumber,
      heterogeneity: c.heterogeneity,
      optimumLoss: theory.optimum.loss,
      certificate: theory.optimum.gradientNorm,
      reference: theory.reference,
    },
  };
}
