// FedProx (Li et al., "Federated Optimization in Heterogeneous Networks", MLSys 2020), solved
// inexactly by local gradient steps on the proximal local objective
//   f_i(y) + (mu_prox / 2) ||y - x||^2:
// y <- x; tau_i times y <- y - eta_i (grad f_i(y) + mu_prox (y - x)); the server is FedAvg's.
// With mu_prox = 0 every step is FedAvg's step.

import {
  aggregateDeltas,
  broadcastModel,
  initAveragingServer,
  type AveragingServerState,
} from './averaging-server.js';
import {
  assertBudget,
  assertClientId,
  assertConfig,
  assertExchange,
  assertObjectiveDimension,
  requireField,
} from './invariants.js';
import { freshDifference, stepGradient } from './local-descent.js';
import type { Method } from './method.js';

const EXCHANGES = ['local'] as const;

export interface FedProxClientState {
  dim: number;
  clientId: number;
  /** mu_prox */
  proxCoefficient: number;
  /** y */
  iterate: Float64Array;
  /** gradient work buffer */
  gradient: Float64Array;
}

export const fedprox: Method<AveragingServerState, FedProxClientState> = {
  name: 'fedprox',
  exchanges: EXCHANGES,
  initServer: initAveragingServer,
  initClient(dim, cfg, clientId) {
    assertConfig(dim, cfg);
    assertClientId(clientId, cfg);
    return {
      dim,
      clientId,
      proxCoefficient: cfg.proxCoefficient,
      iterate: new Float64Array(dim),
      gradient: new Float64Array(dim),
    };
  },
  broadcast(server, exchange) {
    assertExchange('fedprox', EXCHANGES, exchange);
    return broadcastModel(server.model);
  },
  work(client, objective, down, budget, exchange) {
    assertExchange('fedprox', EXCHANGES, exchange);
    assertObjectiveDimension(objective, client.dim);
    assertBudget(budget);
    const x = requireField(down, 'model', client.dim);
    const y = client.iterate;
    const g = client.gradient;
    const eta = budget.stepSize;
    const mu = client.proxCoefficient;
    y.set(x);
    for (let step = 0; step < budget.localSteps; step++) {
      stepGradient(objective, budget.sampler, y, g);
      for (let j = 0; j < y.length; j++) y[j] -= eta * (g[j] + mu * (y[j] - x[j]));
    }
    return { delta: freshDifference(y, x) };
  },
  aggregate(server, uploads, exchange) {
    assertExchange('fedprox', EXCHANGES, exchange);
    aggregateDeltas(server, uploads);
  },
  model: (server) => server.model,
};
