// One simulated client: its objective, its method state, its minibatch stream and both ends of
// its compression channels that live on the client (uplink error feedback, downlink replicas).
// The in-process engine and the worker process run this very class, which is what makes their
// models equal bit for bit.

import type { Budget, Method } from '../algorithm/method.js';
import type { MinibatchSampler } from '../problem/minibatch-sampler.js';
import { methodByName } from '../algorithm/registry.js';
import type { Objective } from '../problem/objective.js';
import { UniformMinibatchSampler } from '../problem/minibatch-sampler.js';
import { UplinkEncoder } from '../compress/uplink.js';
import { ReplicaDecoder } from '../compress/replica.js';
import type { CompressedVector } from '../compress/compressed-vector.js';
import type { WirePlan } from './run-plan.js';
import { minibatchRng, uplinkRngFor } from './seeded-streams.js';
import {
  assertSameShape,
  assertVectorsByName,
  flattenState,
  StateTreeError,
} from '../base/state-tree.js';

export type EncodedFields = Record<string, CompressedVector>;

export interface ClientWorkResult {
  encodedUp: EncodedFields;
  /** local steps actually taken (tau_i, or fewer where the method stops early) */
  stepsTaken: number;
}

/**
 * Everything a client carries from one exchange to the next, as structured-cloneable data: the
 * method state and both compression ends. Restoring it into a fresh runtime of the same plan
 * and client continues the client bit for bit (the objective and the random streams are
 * rebuilt from the plan).
 */
export interface ClientRuntimeSnapshot {
  clientId: number;
  methodState: unknown;
  uplinkMemories: Record<string, Float64Array>;
  downlinkReplicas: Record<string, Float64Array>;
}

/** A copy of a snapshot without its replicas: downlink ones and the uplink's state fields. */
export function snapshotWithReplicasReset(
  snapshot: ClientRuntimeSnapshot,
  uplinkStateFields: readonly string[],
): ClientRuntimeSnapshot {
  const uplinkMemories: Record<string, Float64Array> = {};
  for (const [field, memory] of Object.entries(snapshot.uplinkMemories)) {
    if (!uplinkStateFields.includes(field)) uplinkMemories[field] = memory;
  }
  return {
    clientId: snapshot.clientId,
    methodState: snapshot.methodState,
    uplinkMemories,
    downlinkReplicas: {},
  };
}

/** The snapshot of a client that has not worked yet: its method's initial state, no replicas. */
export function freshClientSnapshot(plan: WirePlan, clientId: number): ClientRuntimeSnapshot {
  const method = methodByName(plan.scenario.method.name);
  return {
    clientId,
    methodState: method.initClient(plan.dim, plan.methodConfig, clientId),
    uplinkMemories: {},
    downlinkReplicas: {},
  };
}

/**
 * Throws StateTreeError unless `snapshot` (from a file or a peer) has the shape this plan's
 * method gives client `clientId`: its method state's keys, kinds and lengths, and vectors of the
 * plan's dimension in its memories and replicas.
 */
export function checkClientSnapshot(
  plan: WirePlan,
  clientId: number,
  snapshot: ClientRuntimeSnapshot,
): void {
  const path = `clients[${clientId}]`;
  if (snapshot.clientId !== clientId)
    throw new StateTreeError(
      'E_STATE_TREE',
      `${path}.clientId: the state of client ${snapshot.clientId}`,
    );
  assertSameShape(
    freshClientSnapshot(plan, clientId).methodState,
    snapshot.methodState,
    `${path}.methodState`,
  );
  assertVectorsByName(snapshot.uplinkMemories, plan.dim, `${path}.uplinkMemories`);
  assertVectorsByName(snapshot.downlinkReplicas, plan.dim, `${path}.downlinkReplicas`);
}

/**
 * The most a client's snapshot of this plan holds, for the frame limit of state messages: the
 * float64 values of its method state plus one vector per field name the channels may keep
 * (`fieldNames`: every up and down field), and a generous bound on its tree's text.
 */
export function clientStateBound(
  plan: WirePlan,
  fieldNames: number,
): { valuesMax: number; treeBytesMax: number } {
  const fresh = flattenState(freshClientSnapshot(plan, 0));
  const values = fresh.vectors.reduce((n, v) => n + v.length, 0);
  // A fresh tree holds small numbers; a worked one may print each as up to 24 characters.
  const treeBytes = JSON.stringify(fresh.tree).length;
  return {
    valuesMax: values + fieldNames * plan.dim,
    treeBytesMax: 4 * treeBytes + 256 * fieldNames + 16 * 1024,
  };
}

export class ClientRuntime {
  readonly clientId: number;
  private readonly plan: WirePlan;
  private readonly method: Method;
  private readonly objective: Objective;
  private state: unknown;
  private readonly uplink: UplinkEncoder;
  private readonly downlink: ReplicaDecoder;

  constructor(plan: WirePlan, clientId: number, objective: Objective) {
    this.plan = plan;
    this.clientId = clientId;
    this.method = methodByName(plan.scenario.method.name);
    this.objective = objective;
    this.state = this.method.initClient(plan.dim, plan.methodConfig, clientId);
    this.uplink = new UplinkEncoder(
      plan.scenario.compression.uplink,
      this.method.uplinkStateFields,
    );
    this.downlink = new ReplicaDecoder(plan.scenario.compression.downlink);
  }

  private samplerFor(round: number, exchange: string): MinibatchSampler | null {
    const gradient = this.plan.scenario.method.gradient;
    if (gradient === 'full') return null;
    return new UniformMinibatchSampler(
      minibatchRng(this.plan.scenario.seed, this.clientId, round, exchange),
      this.objective.sampleCount,
      gradient.minibatch,
    );
  }

  /** Decodes what came down, does the exchange's work and encodes what goes up. */
  work(
    round: number,
    exchange: string,
    encodedDown: EncodedFields,
    localSteps: number,
    stepSize: number,
  ): ClientWorkResult {
    const down = this.downlink.decode(encodedDown);
    const budget: Budget = { localSteps, stepSize, sampler: this.samplerFor(round, exchange) };
    const up = this.method.work(this.state, this.objective, down, budget, exchange);
    const stepsTaken = this.method.stepsTaken ? this.method.stepsTaken(this.state) : localSteps;
    const encodedUp = this.uplink.encode(
      up,
      uplinkRngFor(this.plan.scenario.seed, this.clientId, round, exchange),
    );
    return { encodedUp, stepsTaken };
  }

  /** A deep copy of the client's state (see ClientRuntimeSnapshot). */
  snapshot(): ClientRuntimeSnapshot {
    return {
      clientId: this.clientId,
      methodState: structuredClone(this.state),
      uplinkMemories: this.uplink.snapshot(),
      downlinkReplicas: this.downlink.snapshot(),
    };
  }

  /** Continues from a snapshot of this client (deep-copied, so the snapshot stays the caller's). */
  restore(snapshot: ClientRuntimeSnapshot): void {
    if (snapshot.clientId !== this.clientId) {
      throw new RangeError(
        `snapshot of client ${snapshot.clientId} restored into client ${this.clientId}`,
      );
    }
    this.state = structuredClone(snapshot.methodState);
    this.uplink.restore(snapshot.uplinkMemories);
    this.downlink.restore(snapshot.downlinkReplicas);
  }

  /**
   * restore() for a snapshot from outside this process (a checkpoint file, a coordinator's
   * message): throws StateTreeError unless its shape is the one this client's method builds.
   */
  restoreChecked(snapshot: ClientRuntimeSnapshot): void {
    checkClientSnapshot(this.plan, this.clientId, snapshot);
    this.restore(snapshot);
  }

  /**
   * Starts the downlink replicas and the uplink state-field replicas afresh (all zero), as the
   * server does for this client after a resumed connection (ServerRuntime.resetReplicas). The
   * error-feedback memories and the method state are the client's own and stay.
   */
  resetReplicas(): void {
    this.restore(snapshotWithReplicasReset(this.snapshot(), this.method.uplinkStateFields ?? []));
  }

  /** The method state itself (plain data), for the round map. */
  methodState(): unknown {
    return this.state;
  }

  /** Continues from this method state, which the runtime keeps as it is (no copy): the round map's states. */
  adoptMethodState(state: unknown): void {
    this.state = state;
  }
}
