// FedAvg (McMahan et al., "Communication-Efficient Learning of Deep Networks from
// Decentralized Data", AISTATS 2017): y <- x; tau_i times y <- y - eta_i grad f_i(y);
// upload delta = y - x; x <- x + eta_g sum_{i in S} p~_i delta_i.

import {
  aggregateDeltas,
  broadcastModel,
  initAveragingServer,
  type AveragingServerState,
} from './averaging-server.js';
import { assertExchange } from './invariants.js';
import { initLocalClient, localDescentDelta, type LocalClientState } from './local-client.js';
import type { Method } from './method.js';

const EXCHANGES = ['local'] as const;

export const fedavg: Method<AveragingServerState, LocalClientState> = {
  name: 'fedavg',
  exchanges: EXCHANGES,
  initServer: initAveragingServer,
  initClient: initLocalClient,
  broadcast(server, exchange) {
    assertExchange('fedavg', EXCHANGES, exchange);
    return broadcastModel(server.model);
  },
  work(client, objective, down, budget, exchange) {
    assertExchange('fedavg', EXCHANGES, exchange);
    return localDescentDelta(client, objective, down, budget, budget.localSteps);
  },
  aggregate(server, uploads, exchange) {
    assertExchange('fedavg', EXCHANGES, exchange);
    aggregateDeltas(server, uploads);
  },
  model: (server) => server.model,
};
