// What a distributed run produces: the engine's result shape (so that the same summary and
// results code serve both) plus the layers of bytes, lost workers and protocol errors, in more
// detail than outcome.json keeps (server/results.ts reduces them).

import type { RunOutcomeBase } from '../src/engine/run-summary.js';
import type { DirectionBytes } from './byte-ledger.js';
import type { ProtocolErrorCounts } from './protocol-error-counter.js';
import type { LostWorker } from './worker-registry.js';

export interface CoordinatorOutcome extends RunOutcomeBase {
  virtualSeconds: number;
  /** from the coordinator's start until enough workers had joined; not part of wallSeconds */
  joinSeconds: number;
  /** round traffic (down and up messages) at the three layers */
  bytesLayers: { payload: DirectionBytes; encoded: DirectionBytes; wire: DirectionBytes };
  /** handshake, heartbeats, errors and done: no payload */
  controlBytes: { encoded: DirectionBytes; wire: DirectionBytes };
  /** the sockets' own counters summed over every worker connection since its upgrade */
  socketBytes: DirectionBytes;
  payloadBytesByField: { up: Record<string, number>; down: Record<string, number> };
  workers: { workerName: string; clientIds: number[] }[];
  lostWorkers: LostWorker[];
  protocolErrors: ProtocolErrorCounts;
}
