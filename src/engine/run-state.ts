// A run's whole state between two rounds: where the walk stands (round, virtual clock, wall
// seconds so far), the server runtime's state and every client runtime's. Random streams need no
// place here: every draw comes from a stream derived afresh from (seed, purpose, client, round,
// exchange) (seeded-streams.ts, round-speed.ts, participation.ts), so no generator's position
// crosses a round boundary. A checkpoint file (src/results/checkpoint-file.ts) holds this state
// and the records' offsets; restoring it into fresh runtimes of the same plan continues the run
// bit for bit.

import type { ClientRuntime, ClientRuntimeSnapshot } from './client-runtime.js';
import type { ServerRuntime, ServerRuntimeSnapshot } from './server-runtime.js';
import type { RunPlan } from './run-plan.js';
import { StateTreeError } from '../base/state-tree.js';
import type { WalkPoint } from './walk-transport.js';

export interface RunState extends WalkPoint {
  /** the plan the state belongs to (RunPlan.planHash) */
  planHash: string;
  server: ServerRuntimeSnapshot;
  /** by client id, every client of the plan */
  clients: ClientRuntimeSnapshot[];
}

/** Restores the runtimes of `plan` to `state`; throws StateTreeError when it does not fit them. */
export function restoreRunState(
  plan: RunPlan,
  state: RunState,
  server: ServerRuntime,
  clients: readonly ClientRuntime[],
): void {
  if (state.clients.length !== plan.clientCount)
    throw new StateTreeError(
      'E_STATE_TREE',
      `clients: ${state.clients.length} client states for a plan of ${plan.clientCount} clients`,
    );
  server.restore(state.server);
  for (const client of clients) client.restoreChecked(state.clients[client.clientId]);
}
