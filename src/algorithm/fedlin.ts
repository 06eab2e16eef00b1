// FedLin (NeurIPS 2021). Two exchanges a round:
//   "gradient": down "model" x; each client keeps x and its full gradient grad f_i(x) and
//               uploads { gradient: grad f_i(x) }; the server forms g = sum_{i in S} p~_i grad f_i(x).
//   "local":    down "gradient" g; y <- x; tau_i times y <- y - eta_i (grad f_i(y) - grad f_i(x) + g);
//               upload { delta: y - x }; x <- x + sum_{i in S} p~_i delta_i (= sum p~_i y_i).
// eta_i is the budget's step size; the paper's choice eta/tau_i is the "inverse-steps" policy.
// The correction is the full gradient at x even when local steps use minibatches. At x = x*,
// g = 0 and the local direction vanishes at y = x, so x* is a fixed point whatever tau_i is.
// The paper has no server step size, so serverStepSize is not used.

import {
  assertBudget,
  assertClientId,
  assertConfig,
  assertExchange,
  assertObjectiveDimension,
  assertUploads,
  copyInitialModel,
  requireField,
} from './invariants.js';
import { descend, freshDifference } from './local-descent.js';
import type { Method } from './method.js';
import type { Fields } from '../vec/fields.js';
import { MethodError } from './method-error.js';
import { renormalizedWeights, weightedFieldSum } from './participant-weights.js';

const EXCHANGES = ['gradient', 'local'] as const;

export interface FedLinServerState {
  dim: number;
  clientCount: number;
  /** x */
  model: Float64Array;
  /** g, the participants' weighted mean gradient at x from this round's gradient exchange */
  gradient: Float64Array;
  /** work buffer for the weighted mean of the deltas */
  meanDelta: Float64Array;
}

export interface FedLinClientState {
  dim: number;
  clientId: number;
  /** x as received in this round's gradient exchange */
  anchor: Float64Array;
  /** grad f_i(anchor), full */
  anchorGradient: Float64Array;
  /** true between this client's gradient exchange and its local exchange */
  anchorReady: boolean;
  /** y */
  iterate: Float64Array;
  /** g - grad f_i(x) for the current round */
  correction: Float64Array;
  /** gradient work buffer */
  gradient: Float64Array;
}

export const fedlin: Method<FedLinServerState, FedLinClientState> = {
  name: 'fedlin',
  exchanges: EXCHANGES,
  uplinkStateFields: ['gradient'],
  initServer(dim, cfg, initialModel) {
    assertConfig(dim, cfg);
    return {
      dim,
      clientCount: cfg.clientCount,
      model: copyInitialModel(initialModel, dim),
      gradient: new Float64Array(dim),
      meanDelta: new Float64Array(dim),
    };
  },
  initClient(dim, cfg, clientId) {
    assertConfig(dim, cfg);
    assertClientId(clientId, cfg);
    return {
      dim,
      clientId,
      anchor: new Float64Array(dim),
      anchorGradient: new Float64Array(dim),
      anchorReady: false,
      iterate: new Float64Array(dim),
      correction: new Float64Array(dim),
      gradient: new Float64Array(dim),
    };
  },
  broadcast(server, exchange): Fields {
    assertExchange('fedlin', EXCHANGES, exchange);
    if (exchange === 'gradient') return { model: Float64Array.from(server.model) };
    return { gradient: Float64Array.from(server.gradient) };
  },
  work(client, objective, down, budget, exchange): Fields {
    assertExchange('fedlin', EXCHANGES, exchange);
    assertObjectiveDimension(objective, client.dim);
    if (exchange === 'gradient') {
      client.anchor.set(requireField(down, 'model', client.dim));
      objective.gradient(client.anchor, client.anchorGradient);
      client.anchorReady = true;
      return { gradient: Float64Array.from(client.anchorGradient) };
    }
    if (!client.anchorReady) {
      throw new MethodError(
        'E_METHOD_SEQUENCE',
        `client ${client.clientId}: FedLin's local exchange needs this round's gradient exchange first`,
      );
    }
    assertBudget(budget);
    const g = requireField(down, 'gradient', client.dim);
    const correction = client.correction;
    const anchorGradient = client.anchorGradient;
    for (let j = 0; j < correction.length; j++) correction[j] = g[j] - anchorGradient[j];
    const y = client.iterate;
    y.set(client.anchor);
    descend(
      objective,
      budget.sampler,
      y,
      budget.localSteps,
      budget.stepSize,
      correction,
      client.gradient,
    );
    client.anchorReady = false;
    return { delta: freshDifference(y, client.anchor) };
  },
  aggregate(server, uploads, exchange) {
    assertExchange('fedlin', EXCHANGES, exchange);
    const field = exchange === 'gradient' ? 'gradient' : 'delta';
    assertUploads(uploads, server.clientCount, server.dim, [field]);
    if (uploads.length === 0) return;
    const weights = renormalizedWeights(uploads);
    if (exchange === 'gradient') {
      weightedFieldSum(uploads, weights, 'gradient', server.gradient);
      return;
    }
    weightedFieldSum(uploads, weights, 'delta', server.meanDelta);
    const x = server.model;
    const mean = server.meanDelta;
    for (let j = 0; j < x.length; j++) x[j] += mean[j];
  },
  model: (server) => server.model,
};
