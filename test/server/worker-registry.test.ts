// Dealing clients to workers: round-robin in join order within each worker's capacity
// (min(its capacity, maxClientsPerWorker)), ids increasing per worker; the run is ready only when
// enough workers joined and their capacity covers every client.

import { describe, expect, it } from 'vitest';
import { SessionStateMachine } from '../../server/session-states.js';
import { WorkerRegistry } from '../../server/worker-registry.js';
import type { WorkerSession } from '../../server/worker-session.js';

function session(name: string, capacity: number): WorkerSession {
  // The registry reads a session's name, capacity and clients and moves its state along the real table.
  return Object.assign(new SessionStateMachine(), {
    workerName: name,
    capacity,
    clientIds: new Set<number>(),
  }) as unknown as WorkerSession;
}

describe('WorkerRegistry', () => {
  it('waits for capacity and the minimum of workers, then deals round-robin', () => {
    const registry = new WorkerRegistry({
      clientCount: 5,
      workersMin: 2,
      maxClientsPerWorker: 3,
      workersMax: 4,
    });
    const a = session('a', 10);
    const b = session('b', 2);
    expect(registry.join(a)).toBe(true);
    expect(registry.isReady()).toBe(false);
    expect(registry.join(b)).toBe(true);
    expect(registry.isReady()).toBe(true);
    const dealt = registry.assign();
    expect(dealt.get(a)).toEqual([0, 2, 4]);
    expect(dealt.get(b)).toEqual([1, 3]);
    expect(registry.join(session('late', 1))).toBe(false);
  });

  it('marks a lost worker and its clients', () => {
    const registry = new WorkerRegistry({
      clientCount: 2,
      workersMin: 2,
      maxClientsPerWorker: 1,
      workersMax: 2,
    });
    const a = session('a', 1);
    const b = session('b', 1);
    registry.join(a);
    registry.join(b);
    registry.assign();
    expect(registry.markLost(b, 3, 'connection closed')).toEqual([1]);
    expect(registry.isClientActive(1)).toBe(false);
    expect(registry.isClientActive(0)).toBe(true);
    expect(registry.lost).toEqual([
      { workerName: 'b', clientIds: [1], round: 3, reason: 'connection closed' },
    ]);
    expect(registry.markLost(b, 4, 'again')).toEqual([]);
  });
});
