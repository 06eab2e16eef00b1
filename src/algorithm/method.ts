// The one interface every federated method implements. The in-process engine and the
// distributed coordinator drive a method through these functions only, so that both give the
// same model bit for bit. Compression is not a method's business: it applies per channel,
// between `broadcast`/`work` (down) and `work`/`aggregate` (up).

import type { Objective } from '../problem/objective.js';
import type { MinibatchSampler } from '../problem/minibatch-sampler.js';
import type { Fields } from '../vec/fields.js';

export type MethodName =
  'gd' | 'fedavg' | 'fedprox' | 'fednova' | 'scaffold' | 'fedlin' | 'fedsplit';

/** Method settings resolved from the scenario (numbers only; no 'auto' left). */
export interface MethodConfig {
  /** total number of clients m */
  clientCount: number;
  /** base local step size eta */
  stepSize: number;
  /** server step size eta_g */
  serverStepSize: number;
  /** FedProx mu_prox */
  proxCoefficient: number;
  /** FedSplit: stop inner prox steps once the gradient norm is at or below this (0: run all tau_i) */
  proxTolerance: number;
}

/** What a client may spend in one exchange, fixed before it starts. */
export interface Budget {
  /** tau_i */
  localSteps: number;
  /** eta_i, after the step policy (eta or eta/tau_i) */
  stepSize: number;
  /** null: full gradients */
  sampler: MinibatchSampler | null;
}

export interface Upload {
  clientId: number;
  /** p_i as a share of all m clients (sums to 1 over every client); methods renormalize over the participants */
  weight: number;
  /** local steps actually taken */
  localSteps: number;
  /** eta_i used */
  stepSize: number;
  fields: Fields;
}

export interface Method<ServerState = unknown, ClientState = unknown> {
  readonly name: MethodName;
  /**
   * e.g. ["local"], or ["gradient", "local"] for FedLin. The last exchange is the one where a
   * client spends its tau_i local steps; an earlier exchange costs one gradient evaluation.
   */
  readonly exchanges: readonly string[];
  /**
   * Upload fields that carry a state (the server wants the latest value, e.g. FedLin's
   * gradient) rather than an increment that the server sums (a delta). Compression treats them
   * differently (see src/compress/uplink.ts); absent means every field is an increment.
   */
  readonly uplinkStateFields?: readonly string[];
  initServer(dim: number, cfg: MethodConfig, initialModel: Float64Array): ServerState;
  initClient(dim: number, cfg: MethodConfig, clientId: number): ClientState;
  /** Vectors going down for this exchange. Must not be mutated by the receiver. */
  broadcast(server: ServerState, exchange: string): Fields;
  /** A client's local work; returns the vectors going up (before compression). */
  work(
    client: ClientState,
    objective: Objective,
    down: Fields,
    budget: Budget,
    exchange: string,
  ): Fields;
  /** Folds the (decompressed) uploads into the server state; uploads arrive sorted by client id. */
  aggregate(server: ServerState, uploads: Upload[], exchange: string): void;
  /**
   * Local steps the last `work` call actually took, where a method may stop early (FedSplit's
   * inexact prox); absent means the budget's tau_i was spent in full.
   */
  stepsTaken?(client: ClientState): number;
  /** The current server model x (a view; copy before keeping). */
  model(server: ServerState): Float64Array;
}
