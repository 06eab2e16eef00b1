// SCAFFOLD (Karimireddy et al., "SCAFFOLD: Stochastic Controlled Averaging for Federated
// Learning", ICML 2020, Algorithm 1 with option II for the control update):
//   client: y <- x; tau_i times y <- y - eta_i (grad f_i(y) - c_i + c);
//           c_i+ = c_i - c + (x - y) / (tau_i eta_i); upload delta = y - x, controlDelta = c_i+ - c_i
//   server: x <- x + eta_g sum_{i in S} p~_i delta_i;  c <- c + sum_{i in S} p_i controlDelta_i
// The paper states the server step with uniform clients: x moves by eta_g times the plain mean
// over S and c by (|S|/m) times the plain mean of the control deltas. With p_i = 1/m the lines
// above are exactly that. With unequal p_i (weights by sample count) the p-weighted form keeps
// c = sum_i p_i c_i, so the fixed point is the minimizer of f = sum_i p_i f_i, the objective
// every other method here solves; plain means would converge to the minimizer of the
// unweighted mean of the f_i instead.

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
import { renormalizedWeights, weightedFieldSum } from './participant-weights.js';

const EXCHANGES = ['local'] as const;

export interface ScaffoldServerState {
  dim: number;
  clientCount: number;
  /** eta_g */
  serverStepSize: number;
  /** x */
  model: Float64Array;
  /** c, equal to sum_i p_i c_i over all clients */
  control: Float64Array;
  /** work buffer for weighted sums of uploads */
  sum: Float64Array;
}

export interface ScaffoldClientState {
  dim: number;
  clientId: number;
  /** c_i, zero until the client first works */
  control: Float64Array;
  /** y */
  iterate: Float64Array;
  /** c - c_i for the current round */
  correction: Float64Array;
  /** gradient work buffer */
  gradient: Float64Array;
}

export const scaffold: Method<ScaffoldServerState, ScaffoldClientState> = {
  name: 'scaffold',
  exchanges: EXCHANGES,
  initServer(dim, cfg, initialModel) {
    assertConfig(dim, cfg);
    return {
      dim,
      clientCount: cfg.clientCount,
      serverStepSize: cfg.serverStepSize,
      model: copyInitialModel(initialModel, dim),
      control: new Float64Array(dim),
      sum: new Float64Array(dim),
    };
  },
  initClient(dim, cfg, clientId) {
    assertConfig(dim, cfg);
    assertClientId(clientId, cfg);
    return {
      dim,
      clientId,
      control: new Float64Array(dim),
      iterate: new Float64Array(dim),
      correction: new Float64Array(dim),
      gradient: new Float64Array(dim),
    };
  },
  broadcast(server, exchange) {
    assertExchange('scaffold', EXCHANGES, exchange);
    return { model: Float64Array.from(server.model), control: Float64Array.from(server.control) };
  },
  work(client, objective, down, budget, exchange) {
    assertExchange('scaffold', EXCHANGES, exchange);
    assertObjectiveDimension(objective, client.dim);
    assertBudget(budget);
    const x = requireField(down, 'model', client.dim);
    const c = requireField(down, 'control', client.dim);
    const ci = client.control;
    const correction = client.correction;
    for (let j = 0; j < correction.length; j++) correction[j] = c[j] - ci[j];
    const y = client.iterate;
    y.set(x);
    descend(
      objective,
      budget.sampler,
      y,
      budget.localSteps,
      budget.stepSize,
      correction,
      client.gradient,
    );

    // Option II: c_i+ - c_i = -c + (x - y) / (tau_i eta_i); the client adds the same vector it
    // uploads, so that the server's c stays the weighted sum of the clients' c_i.
    const inverseSpan = 1 / (budget.localSteps * budget.stepSize);
    const controlDelta = new Float64Array(client.dim);
    for (let j = 0; j < controlDelta.length; j++) {
      controlDelta[j] = (x[j] - y[j]) * inverseSpan - c[j];
      ci[j] += controlDelta[j];
    }
    return { delta: freshDifference(y, x), controlDelta };
  },
  aggregate(server, uploads, exchange) {
    assertExchange('scaffold', EXCHANGES, exchange);
    assertUploads(uploads, server.clientCount, server.dim, ['delta', 'controlDelta']);
    if (uploads.length === 0) return;
    const x = server.model;
    const sum = server.sum;
    weightedFieldSum(uploads, renormalizedWeights(uploads), 'delta', sum);
    const etaG = server.serverStepSize;
    for (let j = 0; j < x.length; j++) x[j] += etaG * sum[j];

    const shares = new Float64Array(uploads.length);
    for (let i = 0; i < uploads.length; i++) shares[i] = uploads[i].weight;
    weightedFieldSum(uploads, shares, 'controlDelta', sum);
    const c = server.control;
    for (let j = 0; j < c.length; j++) c[j] += sum[j];
  },
  model: (server) => server.model,
};
