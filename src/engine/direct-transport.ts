// The round walk's transport by direct calls: every client is a ClientRuntime in this process
// and answers its down at once, and every up comes back. The in-process engine runs on it; so
// do the round map for predictions and the field-shape probe, over the plan's ideal twin.

import { isNonFiniteError } from '../base/coded-error.js';
import type { ClientRuntime } from './client-runtime.js';
import type {
  ClientReturn,
  ExchangeOrder,
  ExchangeReply,
  ExchangeTransport,
} from './walk-transport.js';

export class DirectTransport implements ExchangeTransport {
  /** by client id; an id with no runtime here is never a member */
  private readonly clients: readonly (ClientRuntime | undefined)[];

  constructor(clients: readonly (ClientRuntime | undefined)[]) {
    this.clients = clients;
  }

  members(_round: number, _exchange: string, candidates: readonly number[]): readonly number[] {
    return candidates.filter((id) => this.clients[id] !== undefined);
  }

  exchange(order: ExchangeOrder): ExchangeReply {
    const returns = new Map<number, ClientReturn>();
    for (const { assignment: a, encodedDown } of order.downs) {
      try {
        const result = this.clients[a.clientId]!.work(
          order.round,
          order.exchange,
          encodedDown,
          a.localSteps,
          a.stepSize,
        );
        returns.set(a.clientId, {
          kind: 'up',
          encodedUp: result.encodedUp,
          stepsTaken: result.stepsTaken,
        });
      } catch (error) {
        // A client whose update is no longer finite cannot encode it; the walk decides what
        // that means. The other clients still answer, as a worker's would.
        if (!isNonFiniteError(error)) throw error;
        returns.set(a.clientId, { kind: 'not-finite' });
      }
    }
    return { returns };
  }
}
