// FedSplit (Pathak and Wainwright, "FedSplit: an algorithmic framework for fast federated
// optimization", NeurIPS 2020, Algorithm 1): Peaceman-Rachford splitting of
//   minimize sum_i p_i f_i(x_i) subject to x_1 = ... = x_m
// with one auxiliary vector z_i per client, kept in the client state. Per round, client i:
//   local prox step:      u = prox_{s f_i}(2 x - z_i)
//   local centering step: z_i+ = z_i + 2 (u - x)
// and the server sets x = sum_i p_i z_i over ALL clients (the projection onto consensus in the
// p-weighted inner product; the paper's plain mean is the case p_i = 1/m).
//
// Wire: down { model: x }; up { delta: z_i+ - z_i = 2 (u - x) }. The server keeps x equal to
// the weighted mean of the z_i by adding p_i delta_i with the participants' un-renormalized
// shares: the z_j of clients that did not take part did not move. serverStepSize is not used.
//
// Initialization: Algorithm 1 starts every z_i at x0, but a client state is built without x0,
// so z_i starts at the first model the client receives. Under full participation that is x0.
// A client that first takes part in a later round starts from the current x instead (any
// start is valid for the splitting); the server then also replaces that client's x0 term of
// the mean: x += p_i (x_now - x0), with its own exact x_now (under downlink compression the
// client's copy differs by the compression error, once per client).
// A client's z_i moves in work(): an upload the server discards (a fastest-k drop) leaves x
// out of step with the z_i, as it leaves SCAFFOLD's c out of step with the c_i.
//
// The prox is solved inexactly: from u = 2x - z_i, up to tau_i gradient steps on
//   h(u) = f_i(u) + ||u - v||^2 / (2 s),  v = 2x - z_i,  s = cfg.stepSize (one s for every
// client and round, as the splitting requires; the budget's step size is not used),
// with step 1 / (L_i + 1/s), L_i = objective.smoothnessBound(), the reciprocal of h's
// smoothness constant. The steps stop early once ||grad h(u)|| <= cfg.proxTolerance
// (0: always take tau_i steps). With a sampler, grad f_i is a minibatch gradient.

import type { Objective } from '../problem/objective.js';
import { norm2 } from '../vec/kernels.js';
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
import { stepGradient } from './local-descent.js';
import type { Budget, Method } from './method.js';
import { MethodError } from './method-error.js';

const EXCHANGES = ['local'] as const;

export interface FedSplitServerState {
  dim: number;
  clientCount: number;
  /** x = sum_i p_i z_i */
  model: Float64Array;
  /** x0, the z_i of every client that has not yet taken part */
  initialModel: Float64Array;
  /** 1 once client i's z_i has entered x through an upload */
  joined: Uint8Array;
  /** work buffer for the round's change of x */
  step: Float64Array;
}

export interface FedSplitClientState {
  dim: number;
  clientId: number;
  /** s, the prox parameter */
  proxStepSize: number;
  /** stop the inner steps once ||grad h|| is at or below this (0: never early) */
  proxTolerance: number;
  /** z_i */
  z: Float64Array;
  /** false until z_i is set from the first model received */
  started: boolean;
  /** v = 2x - z_i, the prox centre */
  centre: Float64Array;
  /** u, the inner iterate */
  iterate: Float64Array;
  /** gradient work buffer */
  gradient: Float64Array;
  /** 1 / (L_i + 1/s); 0 until the first work call reads L_i from the objective */
  innerStepSize: number;
  /** inner gradient steps taken in the last work call (<= tau_i; fewer when stopped early) */
  innerStepsTaken: number;
}

/** Inner steps on h(u) = f_i(u) + ||u - v||^2 / (2s) from u = v; returns the steps taken. */
function solveProx(client: FedSplitClientState, objective: Objective, budget: Budget): number {
  const u = client.iterate;
  const v = client.centre;
  const g = client.gradient;
  const inverseS = 1 / client.proxStepSize;
  const alpha = client.innerStepSize;
  const tolerance = client.proxTolerance;
  u.set(v);
  for (let step = 0; step < budget.localSteps; step++) {
    stepGradient(objective, budget.sampler, u, g);
    for (let j = 0; j < u.length; j++) g[j] += (u[j] - v[j]) * inverseS;
    if (tolerance > 0 && norm2(g) <= tolerance) return step;
    for (let j = 0; j < u.length; j++) u[j] -= alpha * g[j];
  }
  return budget.localSteps;
}

export const fedsplit: Method<FedSplitServerState, FedSplitClientState> = {
  name: 'fedsplit',
  exchanges: EXCHANGES,
  initServer(dim, cfg, initialModel) {
    assertConfig(dim, cfg);
    const model = copyInitialModel(initialModel, dim);
    return {
      dim,
      clientCount: cfg.clientCount,
      model,
      initialModel: Float64Array.from(model),
      joined: new Uint8Array(cfg.clientCount),
      step: new Float64Array(dim),
    };
  },
  initClient(dim, cfg, clientId) {
    assertConfig(dim, cfg);
    assertClientId(clientId, cfg);
    return {
      dim,
      clientId,
      proxStepSize: cfg.stepSize,
      proxTolerance: cfg.proxTolerance,
      z: new Float64Array(dim),
      started: false,
      centre: new Float64Array(dim),
      iterate: new Float64Array(dim),
      gradient: new Float64Array(dim),
      innerStepSize: 0,
      innerStepsTaken: 0,
    };
  },
  broadcast(server, exchange) {
    assertExchange('fedsplit', EXCHANGES, exchange);
    return { model: Float64Array.from(server.model) };
  },
  work(client, objective, down, budget, exchange) {
    assertExchange('fedsplit', EXCHANGES, exchange);
    assertObjectiveDimension(objective, client.dim);
    assertBudget(budget);
    const x = requireField(down, 'model', client.dim);
    if (client.innerStepSize === 0) {
      const smoothness = objective.smoothnessBound();
      if (!Number.isFinite(smoothness) || smoothness < 0) {
        throw new MethodError(
          'E_METHOD_CONFIG',
          `client ${client.clientId}: smoothness bound must be finite and >= 0, got ${smoothness}`,
        );
      }
      client.innerStepSize = 1 / (smoothness + 1 / client.proxStepSize);
    }
    const z = client.z;
    if (!client.started) {
      z.set(x);
      client.started = true;
    }
    const v = client.centre;
    for (let j = 0; j < v.length; j++) v[j] = 2 * x[j] - z[j];
    client.innerStepsTaken = solveProx(client, objective, budget);

    const u = client.iterate;
    const delta = new Float64Array(client.dim);
    for (let j = 0; j < delta.length; j++) {
      delta[j] = 2 * (u[j] - x[j]);
      z[j] += delta[j];
    }
    return { delta };
  },
  aggregate(server, uploads, exchange) {
    assertExchange('fedsplit', EXCHANGES, exchange);
    assertUploads(uploads, server.clientCount, server.dim, ['delta']);
    const x = server.model;
    const x0 = server.initialModel;
    const step = server.step;
    step.fill(0);
    for (const upload of uploads) {
      const p = upload.weight;
      const delta = upload.fields.delta;
      for (let j = 0; j < step.length; j++) step[j] += p * delta[j];
      if (server.joined[upload.clientId] === 0) {
        for (let j = 0; j < step.length; j++) step[j] += p * (x[j] - x0[j]);
        server.joined[upload.clientId] = 1;
      }
    }
    for (let j = 0; j < x.length; j++) x[j] += step[j];
  },
  stepsTaken: (client) => client.innerStepsTaken,
  model: (server) => server.model,
};
