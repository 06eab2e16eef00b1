// The server side of a run: the method's server state and one downlink encoder per client
// (each client's replica differs once rounds are skipped or compressed). The in-process engine
// and the coordinator both drive it.

import type { Method, Upload } from '../algorithm/method.js';
import type { Fields } from '../vec/fields.js';
import { methodByName } from '../algorithm/registry.js';
import { ReplicaEncoder } from '../compress/replica.js';
import { compressorForField, downlinkMode } from '../compress/channel.js';
import { compress } from '../compress/compressor.js';
import type { CompressedVector } from '../compress/compressed-vector.js';
import { UplinkDecoder } from '../compress/uplink.js';
import type { EncodedFields } from './client-runtime.js';
import { initialModelOf } from '../problem/initial-model.js';
import type { RunPlan } from './run-plan.js';
import { downlinkRngFor } from './seeded-streams.js';
import { assertSameShape, assertVectorsByName, StateTreeError } from '../base/state-tree.js';

export interface EncodedUpload {
  clientId: number;
  stepsTaken: number;
  stepSize: number;
  encodedUp: EncodedFields;
}

/**
 * Everything the server side carries from one round to the next, as structured-cloneable data:
 * the method state and, per client id, the replicas of both channels that live on the server.
 * Restoring it into a fresh runtime of the same plan continues the server bit for bit.
 */
export interface ServerRuntimeSnapshot {
  methodState: unknown;
  /** per client id: the downlink replicas (what that client holds of each field) */
  downlinkReplicas: Record<string, Float64Array>[];
  /** per client id: the replicas of the uplink's state fields (FedLin's gradient) */
  uplinkReplicas: Record<string, Float64Array>[];
}

export class ServerRuntime {
  readonly method: Method;
  private readonly plan: RunPlan;
  private state: unknown;
  private readonly downlinks: ReplicaEncoder[];
  private readonly uplinks: UplinkDecoder[];
  /** the exact downlink fields of the exchange being encoded (exactDowns) */
  private exactMemo: {
    fields: Fields;
    round: number;
    exchange: string;
    encoded: ReadonlyMap<string, CompressedVector>;
  } | null = null;

  constructor(plan: RunPlan, initialModel: Float64Array = initialModelOf(plan)) {
    this.plan = plan;
    this.method = methodByName(plan.scenario.method.name);
    this.state = this.method.initServer(plan.dim, plan.methodConfig, initialModel);
    this.downlinks = Array.from(
      { length: plan.clientCount },
      () => new ReplicaEncoder(plan.scenario.compression.downlink),
    );
    this.uplinks = Array.from(
      { length: plan.clientCount },
      () => new UplinkDecoder(plan.scenario.compression.uplink, this.method.uplinkStateFields),
    );
  }

  broadcast(exchange: string): Fields {
    return this.method.broadcast(this.state, exchange);
  }

  /** The message for one client; advances that client's downlink replicas. */
  encodeDown(clientId: number, round: number, exchange: string, fields: Fields): EncodedFields {
    const exact = this.exactDowns(round, exchange, fields);
    const replicated: Fields = {};
    for (const [name, v] of Object.entries(fields)) if (!exact.has(name)) replicated[name] = v;
    const encoded = this.downlinks[clientId].encode(
      replicated,
      downlinkRngFor(this.plan.scenario.seed, clientId, round, exchange),
    );
    // In the broadcast's field order, as the encoder gives them.
    const out: EncodedFields = {};
    for (const name of Object.keys(fields)) out[name] = exact.get(name) ?? encoded[name];
    return out;
  }

  /**
   * The fields an exact downlink (compressor 'none' at f64) carries as they are, encoded once
   * for every client of the exchange: such a field keeps no replica and its message does not
   * depend on the client, so one vector serves all of them (read only: a receiver decodes it
   * into arrays of its own). Kept for the broadcast `fields` of one round and exchange.
   */
  private exactDowns(
    round: number,
    exchange: string,
    fields: Fields,
  ): ReadonlyMap<string, CompressedVector> {
    const memo = this.exactMemo;
    if (
      memo !== null &&
      memo.fields === fields &&
      memo.round === round &&
      memo.exchange === exchange
    )
      return memo.encoded;
    const encoded = new Map<string, CompressedVector>();
    for (const [name, v] of Object.entries(fields)) {
      const spec = compressorForField(this.plan.scenario.compression.downlink, name);
      if (downlinkMode(spec) === 'exact') encoded.set(name, compress(v, spec));
    }
    this.exactMemo = { fields, round, exchange, encoded };
    return encoded;
  }

  /**
   * Starts this client's downlink replicas and uplink state-field replicas afresh (all zero), as
   * the client's end does after a resumed connection: a message lost with the old connection
   * leaves the two ends out of step, and zero is the one value both know they share.
   */
  resetReplicas(clientId: number): void {
    this.downlinks[clientId] = new ReplicaEncoder(this.plan.scenario.compression.downlink);
    this.uplinks[clientId] = new UplinkDecoder(
      this.plan.scenario.compression.uplink,
      this.method.uplinkStateFields,
    );
  }

  /** Folds the counted uploads into the server state, in ascending client id whatever the arrival order. */
  aggregate(exchange: string, uploads: readonly EncodedUpload[]): void {
    const decoded: Upload[] = [...uploads]
      .sort((a, b) => a.clientId - b.clientId)
      .map((u) => ({
        clientId: u.clientId,
        weight: this.plan.weights[u.clientId],
        localSteps: u.stepsTaken,
        stepSize: u.stepSize,
        fields: this.uplinks[u.clientId].decode(u.encodedUp),
      }));
    this.method.aggregate(this.state, decoded, exchange);
  }

  /** A copy of the current model x. */
  model(): Float64Array {
    return Float64Array.from(this.method.model(this.state));
  }

  /** A deep copy of the server's state (see ServerRuntimeSnapshot). */
  snapshot(): ServerRuntimeSnapshot {
    return {
      methodState: structuredClone(this.state),
      downlinkReplicas: this.downlinks.map((d) => d.snapshot()),
      uplinkReplicas: this.uplinks.map((u) => u.snapshot()),
    };
  }

  /**
   * Continues from a snapshot of a server of the same plan (deep-copied). Throws StateTreeError
   * when its shape is not the one this plan's method builds (another method, dimension or
   * client count), so that a state read from a file never replaces a state of another kind.
   */
  restore(snapshot: ServerRuntimeSnapshot): void {
    assertSameShape(this.state, snapshot.methodState, 'server.methodState');
    for (const [name, perClient] of [
      ['server.downlinkReplicas', snapshot.downlinkReplicas],
      ['server.uplinkReplicas', snapshot.uplinkReplicas],
    ] as const) {
      if (!Array.isArray(perClient) || perClient.length !== this.plan.clientCount)
        throw new StateTreeError(
          'E_STATE_TREE',
          `${name}: expected one entry for each of the ${this.plan.clientCount} clients`,
        );
      perClient.forEach((r, id) => assertVectorsByName(r, this.plan.dim, `${name}[${id}]`));
    }
    this.state = structuredClone(snapshot.methodState);
    snapshot.downlinkReplicas.forEach((r, id) => this.downlinks[id].restore(r));
    snapshot.uplinkReplicas.forEach((r, id) => this.uplinks[id].restore(r));
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
