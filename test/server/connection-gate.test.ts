// Connections without an accepted hello: each is dropped at its deadline, at most the cap are
// held (the oldest goes for a new one), and an authenticated connection is neither counted nor
// timed.

import { EventEmitter } from 'node:events';
import type { Socket } from 'node:net';
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { ConnectionGate } from '../../server/connection-gate.js';
import type { LimitReason } from '../../server/limit-reasons.js';

let nextPort = 40_000;

function fakeSocket(): Socket & { destroyed: boolean } {
  const socket = new EventEmitter() as Socket & EventEmitter & { destroyed: boolean };
  Object.assign(socket, {
    remoteAddress: '127.0.0.1',
    remotePort: nextPort++,
    destroyed: false,
    destroy() {
      socket.destroyed = true;
      socket.emit('close');
      return socket;
    },
  });
  return socket;
}

describe('ConnectionGate', () => {
  beforeEach(() => vi.useFakeTimers());
  afterEach(() => vi.useRealTimers());

  function gate(unauthenticatedMax: number): {
    gate: ConnectionGate;
    dropped: LimitReason[];
  } {
    const dropped: LimitReason[] = [];
    return {
      gate: new ConnectionGate({
        deadlineSeconds: 5,
        unauthenticatedMax,
        onDropped: (reason) => dropped.push(reason),
      }),
      dropped,
    };
  }

  it('drops a connection without a hello at its deadline, not before', () => {
    const { gate: g, dropped } = gate(4);
    const socket = fakeSocket();
    g.admit(socket);
    vi.advanceTimersByTime(4_999);
    expect(socket.destroyed).toBe(false);
    vi.advanceTimersByTime(1);
    expect(socket.destroyed).toBe(true);
    expect(dropped).toEqual(['E_LIMIT_HANDSHAKE_DEADLINE']);
    expect(g.unauthenticatedCount()).toBe(0);
  });

  it('evicts the oldest unauthenticated connection for a new one past the cap', () => {
    const { gate: g, dropped } = gate(3);
    const sockets = Array.from({ length: 5 }, fakeSocket);
    for (const s of sockets) g.admit(s);
    expect(sockets.map((s) => s.destroyed)).toEqual([true, true, false, false, false]);
    expect(dropped).toEqual(['E_LIMIT_UNAUTHENTICATED', 'E_LIMIT_UNAUTHENTICATED']);
    expect(g.unauthenticatedCount()).toBe(3);
  });

  it('never counts or times an authenticated connection', () => {
    const { gate: g, dropped } = gate(2);
    const worker = fakeSocket();
    g.admit(worker);
    expect(g.authenticated(worker)).toBe(true);
    for (let i = 0; i < 10; i++) g.admit(fakeSocket());
    vi.advanceTimersByTime(60_000);
    expect(worker.destroyed).toBe(false);
    expect(dropped.filter((r) => r === 'E_LIMIT_UNAUTHENTICATED')).toHaveLength(8);
    expect(g.unauthenticatedCount()).toBe(0);
  });

  it('forgets a connection that closed, and says so when asked to authenticate it', () => {
    const { gate: g } = gate(2);
    const socket = fakeSocket();
    g.admit(socket);
    socket.destroy();
    expect(g.unauthenticatedCount()).toBe(0);
    expect(g.authenticated(socket)).toBe(false);
  });
});
