// The server side of gd, FedAvg and FedProx: x <- x + eta_g sum_{i in S} p~_i delta_i with
// p~ the participants' renormalized weights (McMahan et al., AISTATS 2017, with a server step
// size). Kept in one place so that gd and FedAvg aggregate bit for bit alike.

import { assertConfig, assertUploads, copyInitialModel } from './invariants.js';
import type { MethodConfig, Upload } from './method.js';
import type { Fields } from '../vec/fields.js';
import { renormalizedWeights, weightedFieldSum } from './participant-weights.js';

export interface AveragingServerState {
  dim: number;
  clientCount: number;
  /** eta_g */
  serverStepSize: number;
  /** x */
  model: Float64Array;
  /** work buffer for the weighted mean of the deltas */
  meanDelta: Float64Array;
}

export function initAveragingServer(
  dim: number,
  cfg: MethodConfig,
  initialModel: Float64Array,
): AveragingServerState {
  assertConfig(dim, cfg);
  return {
    dim,
    clientCount: cfg.clientCount,
    serverStepSize: cfg.serverStepSize,
    model: copyInitialModel(initialModel, dim),
    meanDelta: new Float64Array(dim),
  };
}

/** The model as a fresh copy, so that a vector in flight never changes under aggregate. */
export function broadcastModel(model: Float64Array): Fields {
  return { model: Float64Array.from(model) };
}

/** Folds the "delta" uploads into x; no uploads leave x unchanged. */
export function aggregateDeltas(server: AveragingServerState, uploads: Upload[]): void {
  assertUploads(uploads, server.clientCount, server.dim, ['delta']);
  if (uploads.length === 0) return;
  weightedFieldSum(uploads, renormalizedWeights(uploads), 'delta', server.meanDelta);
  const x = server.model;
  const mean = server.meanDelta;
  const etaG = server.serverStepSize;
  for (let j = 0; j < x.length; j++) x[j] += etaG * mean[j];
}
