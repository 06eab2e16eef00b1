// The clients a worker hosts. One client, or clients whose exchanges are light
// (hosting-mode.ts), work on the worker's own thread; others work on pool threads
// (client-task.ts), each client's state passed to the task as a snapshot and taken back, so that
// clients run in parallel while each stays bit for bit what it would be on one thread. A client's exchanges run strictly in the order its downs arrived.
// Each client stays on one thread (thread-clients.ts): one single-thread piscina pool per
// thread, given the plan and its clients once (workerData), which starts building its clients'
// shards as soon as the host exists, before the first down arrives.

import { performance } from 'node:perf_hooks';
import { availableParallelism } from 'node:os';
import { Piscina } from 'piscina';
import {
  checkClientSnapshot,
  ClientRuntime,
  freshClientSnapshot,
  snapshotWithReplicasReset,
  type ClientRuntimeSnapshot,
  type EncodedFields,
} from '../src/engine/client-runtime.js';
import { methodByName } from '../src/algorithm/registry.js';
import type { WirePlan } from '../src/engine/run-plan.js';
import { clientObjective } from '../src/data/problem-instance.js';
import { compiledModulePath } from '../runtime/compiled-module.js';
import type {
  ClientTask,
  ClientTaskNonFinite,
  ClientTaskResult,
  ClientThreadData,
} from './client-task.js';
import { CodedError } from '../src/base/coded-error.js';
import { hostsInline } from './hosting-mode.js';
import { clientsByThread } from './thread-clients.js';

type ClientPool = Piscina<
  ClientTask | undefined,
  ClientTaskResult | ClientTaskNonFinite | undefined
>;

/** A pool thread and the start of its clients' shards (prepareTask), which its tasks follow. */
interface ClientThread {
  pool: ClientPool;
  prepared: Promise<unknown>;
}

export interface HostedWork {
  clientId: number;
  round: number;
  exchange: string;
  encodedDown: EncodedFields;
  localSteps: number;
  stepSize: number;
}

export interface HostedResult {
  encodedUp: EncodedFields;
  stepsTaken: number;
  /** real seconds of computing */
  measuredSeconds: number;
  /** real seconds between the call and the start of the client's work (its queue) */
  queuedSeconds: number;
}

export interface ClientHostOptions {
  /** most pool threads; the pool is used only when more than one client is hosted */
  threadsMax: number;
}

export class ClientHost {
  private readonly plan: WirePlan;
  private readonly inline: Map<number, ClientRuntime> | null;
  /** the thread each pooled client computes on */
  private readonly threadOf = new Map<number, ClientThread>();
  private readonly threads: ClientThread[] = [];
  private readonly snapshots = new Map<number, ClientRuntimeSnapshot | null>();
  /** each client's last queued work, so the next waits for it */
  private readonly queues = new Map<number, Promise<unknown>>();

  constructor(plan: WirePlan, clientIds: readonly number[], options: ClientHostOptions) {
    this.plan = plan;
    const threads = Math.max(
      1,
      Math.min(clientIds.length, options.threadsMax, availableParallelism()),
    );
    if (hostsInline(plan, clientIds, threads)) {
      this.inline = new Map(
        clientIds.map((id) => [
          id,
          new ClientRuntime(plan, id, clientObjective(plan.scenario, id)),
        ]),
      );
    } else {
      this.inline = null;
      for (const ids of clientsByThread(plan, clientIds, threads)) {
        const threadData: ClientThreadData = { plan, clientIds: ids };
        const pool: ClientPool = new Piscina({
          filename: compiledModulePath(import.meta.url, 'client-task.js'),
          minThreads: 1,
          maxThreads: 1,
          workerData: threadData,
        });
        const thread = { pool, prepared: pool.run(undefined, { name: 'prepareTask' }) };
        // A failure to build a shard fails that thread's clients' work, which awaits it.
        thread.prepared.catch(() => undefined);
        this.threads.push(thread);
        for (const id of ids) this.threadOf.set(id, thread);
      }
      for (const id of clientIds) this.snapshots.set(id, null);
    }
  }

  /**
   * Resolves once every hosted client's shard is built: at once for inline clients (built in the
   * constructor), after each pool thread's prepareTask otherwise. A thread whose build failed
   * counts as done here; its clients' work fails with that error.
   */
  async ready(): Promise<void> {
    await Promise.allSettled(this.threads.map((thread) => thread.prepared));
  }

  hosts(clientId: number): boolean {
    return this.inline !== null ? this.inline.has(clientId) : this.snapshots.has(clientId);
  }

  /** Queues one exchange of one client after its earlier ones. */
  work(job: HostedWork): Promise<HostedResult> {
    if (!this.hosts(job.clientId))
      throw new RangeError(`client ${job.clientId} is not hosted here`);
    const calledMs = performance.now();
    const previous = this.queues.get(job.clientId) ?? Promise.resolve();
    const next = previous
      .catch(() => undefined)
      .then(() => this.run(job, (performance.now() - calledMs) / 1000));
    this.queues.set(job.clientId, next);
    return next;
  }

  /**
   * Resets each client's replicas (ClientRuntime.resetReplicas) after its queued work and before
   * any work queued later, so that the reset falls between the old connection's downs and the new one's.
   */
  resetReplicas(clientIds: readonly number[]): Promise<void> {
    const stateFields = methodByName(this.plan.scenario.method.name).uplinkStateFields ?? [];
    const resets: Promise<void>[] = [];
    for (const clientId of clientIds) {
      if (!this.hosts(clientId)) throw new RangeError(`client ${clientId} is not hosted here`);
      const previous = this.queues.get(clientId) ?? Promise.resolve();
      const next = previous
        .catch(() => undefined)
        .then(() => {
          if (this.inline !== null) {
            this.inline.get(clientId)!.resetReplicas();
            return;
          }
          const snapshot = this.snapshots.get(clientId) ?? null;
          if (snapshot !== null)
            this.snapshots.set(clientId, snapshotWithReplicasReset(snapshot, stateFields));
        });
      this.queues.set(clientId, next);
      resets.push(next);
    }
    return Promise.all(resets).then(() => undefined);
  }

  /** Queues `step` for `clientId` after its queued work; resolves to what it returns. */
  private afterQueued<T>(clientId: number, step: () => T): Promise<T> {
    if (!this.hosts(clientId)) throw new RangeError(`client ${clientId} is not hosted here`);
    const previous = this.queues.get(clientId) ?? Promise.resolve();
    const next = previous.catch(() => undefined).then(step);
    this.queues.set(clientId, next);
    return next;
  }

  /** The client's state after its queued work (a checkpoint's), as a copy. */
  snapshot(clientId: number): Promise<ClientRuntimeSnapshot> {
    return this.afterQueued(clientId, () => {
      if (this.inline !== null) return this.inline.get(clientId)!.snapshot();
      return structuredClone(
        this.snapshots.get(clientId) ?? freshClientSnapshot(this.plan, clientId),
      );
    });
  }

  /**
   * Continues the client from `snapshot` (a resumed run's) after its queued work and before any
   * work queued later; rejects with StateTreeError when the state is not one of this client.
   */
  restore(clientId: number, snapshot: ClientRuntimeSnapshot): Promise<void> {
    return this.afterQueued(clientId, () => {
      if (this.inline !== null) {
        this.inline.get(clientId)!.restoreChecked(snapshot);
        return;
      }
      checkClientSnapshot(this.plan, clientId, snapshot);
      this.snapshots.set(clientId, structuredClone(snapshot));
    });
  }

  private async run(job: HostedWork, queuedSeconds: number): Promise<HostedResult> {
    if (this.inline !== null) {
      const started = performance.now();
      const result = this.inline
        .get(job.clientId)!
        .work(job.round, job.exchange, job.encodedDown, job.localSteps, job.stepSize);
      return { ...result, measuredSeconds: (performance.now() - started) / 1000, queuedSeconds };
    }
    const thread = this.threadOf.get(job.clientId)!;
    await thread.prepared;
    const result = await thread.pool.run({
      snapshot: this.snapshots.get(job.clientId) ?? null,
      ...job,
    });
    if (result === undefined)
      throw new Error(`client ${job.clientId}: its thread answered nothing`);
    if ('nonFinite' in result) throw new CodedError('E_NOT_FINITE', result.nonFinite);
    this.snapshots.set(job.clientId, result.snapshot);
    return {
      encodedUp: result.encodedUp,
      stepsTaken: result.stepsTaken,
      measuredSeconds: result.measuredSeconds,
      queuedSeconds,
    };
  }

  async close(): Promise<void> {
    await Promise.all(this.threads.map(({ pool }) => pool.destroy()));
  }
}
