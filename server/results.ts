// What the coordinator adds to the run's summary beside the fields both runtimes share: the
// engine's outcome shape for the shared summary, and the distributed details (control traffic,
// the sockets' own counters, bytes by field, workers, lost workers, protocol errors).

import type { RunOutcome } from '../src/engine/run-summary.js';
import type { CoordinatorOutcome } from './run-outcome.js';

export function engineOutcomeOf(outcome: CoordinatorOutcome): RunOutcome {
  return {
    plan: outcome.plan,
    theory: outcome.theory,
    finalModel: outcome.finalModel,
    stopReason: outcome.stopReason,
    wallSeconds: outcome.wallSeconds,
    bytesLayers: { encoded: outcome.bytesLayers.encoded, wire: outcome.bytesLayers.wire },
    lostWorkers: outcome.lostWorkers.map((w) => w.workerName),
    protocolErrors: outcome.protocolErrors.received,
  };
}

export interface DistributedDetails {
  stopReason: CoordinatorOutcome['stopReason'];
  distributed: {
    controlBytes: CoordinatorOutcome['controlBytes'];
    socketBytes: CoordinatorOutcome['socketBytes'];
    payloadBytesByField: CoordinatorOutcome['payloadBytesByField'];
    workers: CoordinatorOutcome['workers'];
    lostWorkers: CoordinatorOutcome['lostWorkers'];
    protocolErrorsReported: Record<string, number>;
    /** connections closed for a malformed WebSocket frame, by reason */
    frameErrors: Record<string, number>;
  };
}

export function distributedDetails(outcome: CoordinatorOutcome): DistributedDetails {
  return {
    stopReason: outcome.stopReason,
    distributed: {
      controlBytes: outcome.controlBytes,
      socketBytes: outcome.socketBytes,
      payloadBytesByField: outcome.payloadBytesByField,
      workers: outcome.workers,
      lostWorkers: outcome.lostWorkers,
      protocolErrorsReported: outcome.protocolErrors.reported,
      frameErrors: outcome.protocolErrors.frame,
    },
  };
}
