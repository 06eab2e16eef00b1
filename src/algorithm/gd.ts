// The centralized baseline: one gradient step on f = sum_i p_i f_i per round. Each client
// uploads delta = (x - eta_i grad f_i(x)) - x and the server forms x + eta_g sum p~_i delta_i,
// which is x - eta_g eta grad f(x) under full participation and a common eta. The delta is
// formed as FedAvg forms it (a step, then a difference) rather than as -eta grad f_i(x), so
// that gd is FedAvg with tau = 1 bit for bit. The budget's local step count is ignored.

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

export const gd: Method<AveragingServerState, LocalClientState> = {
  name: 'gd',
  exchanges: EXCHANGES,
  initServer: initAveragingServer,
  initClient: initLocalClient,
  broadcast(server, exchange) {
    assertExchange('gd', EXCHANGES, exchange);
    return broadcastModel(server.model);
  },
  work(client, objective, down, budget, exchange) {
    assertExchange('gd', EXCHANGES, exchange);
    return localDescentDelta(client, objective, down, budget, 1);
  },
  aggregate(server, uploads, exchange) {
    assertExchange('gd', EXCHANGES, exchange);
    aggregateDeltas(server, uploads);
  },
  model: (server) => server.model,
};
