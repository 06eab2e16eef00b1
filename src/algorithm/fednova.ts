// FedNova (Wang et al., "Tackling the Objective Inconsistency Problem in Heterogeneous
// Federated Optimization", NeurIPS 2020) with plain local gradient steps as the local solver.
// Client i runs FedAvg's tau_i steps; the server normalizes each update by its step count,
//   d_i = (x - y_i) / tau_i = -delta_i / tau_i,
// and rescales the mean by the effective step count tau_eff = sum_{i in S} p~_i tau_i:
//   x <- x - eta_g tau_eff sum_{i in S} p~_i d_i.
// With equal tau_i and eta_g = 1 this is FedAvg. tau_i comes from upload.localSteps, the steps
// the client actually took.

import {
  broadcastModel,
  initAveragingServer,
  type AveragingServerState,
} from './averaging-server.js';
import { assertExchange, assertUploads, LOCAL_STEPS_MAX } from './invariants.js';
import { initLocalClient, localDescentDelta, type LocalClientState } from './local-client.js';
import type { Method } from './method.js';
import { MethodError } from './method-error.js';
import { renormalizedWeights, weightedFieldSum } from './participant-weights.js';

const EXCHANGES = ['local'] as const;

export const fednova: Method<AveragingServerState, LocalClientState> = {
  name: 'fednova',
  exchanges: EXCHANGES,
  initServer: initAveragingServer,
  initClient: initLocalClient,
  broadcast(server, exchange) {
    assertExchange('fednova', EXCHANGES, exchange);
    return broadcastModel(server.model);
  },
  work(client, objective, down, budget, exchange) {
    assertExchange('fednova', EXCHANGES, exchange);
    return localDescentDelta(client, objective, down, budget, budget.localSteps);
  },
  aggregate(server, uploads, exchange) {
    assertExchange('fednova', EXCHANGES, exchange);
    assertUploads(uploads, server.clientCount, server.dim, ['delta']);
    for (const upload of uploads) {
      const tau = upload.localSteps;
      if (!Number.isInteger(tau) || tau < 1 || tau > LOCAL_STEPS_MAX) {
        throw new MethodError(
          'E_METHOD_BUDGET',
          `client ${upload.clientId}: local steps must be an integer in [1, ${LOCAL_STEPS_MAX}], got ${tau}`,
        );
      }
    }
    if (uploads.length === 0) return;
    const weights = renormalizedWeights(uploads);
    let effectiveSteps = 0;
    const perStep = new Float64Array(uploads.length);
    for (let i = 0; i < uploads.length; i++) {
      effectiveSteps += weights[i] * uploads[i].localSteps;
      perStep[i] = -weights[i] / uploads[i].localSteps;
    }
    // The coefficients -p~_i / tau_i turn the sum of deltas into sum p~_i d_i directly.
    weightedFieldSum(uploads, perStep, 'delta', server.meanDelta);
    const x = server.model;
    const mean = server.meanDelta;
    const scale = server.serverStepSize * effectiveSteps;
    for (let j = 0; j < x.length; j++) x[j] -= scale * mean[j];
  },
  model: (server) => server.model,
};
