// The session state table: every arrow it declares is taken, every other pair throws
// E_SESSION_TRANSITION and leaves the state alone, and the table names every state.

import { describe, expect, it } from 'vitest';
import {
  SESSION_STATES,
  SESSION_TRANSITIONS,
  SessionStateMachine,
  SessionTransitionError,
  isTransitionAllowed,
  type SessionState,
} from '../../server/session-states.js';

/** The shortest run of moves from 'handshake' to `target`, found over the table itself. */
function pathTo(target: SessionState): SessionState[] {
  const previous = new Map<SessionState, SessionState | null>([['handshake', null]]);
  const queue: SessionState[] = ['handshake'];
  while (queue.length > 0) {
    const at = queue.shift()!;
    for (const next of SESSION_TRANSITIONS[at]) {
      if (previous.has(next)) continue;
      previous.set(next, at);
      queue.push(next);
    }
  }
  if (!previous.has(target)) throw new Error(`'${target}' is not reachable from 'handshake'`);
  const path: SessionState[] = [];
  for (
    let at: SessionState | null = target;
    at !== 'handshake' && at !== null;
    at = previous.get(at)!
  )
    path.unshift(at);
  return path;
}

function machineIn(state: SessionState): SessionStateMachine {
  const machine = new SessionStateMachine();
  for (const step of pathTo(state)) machine.moveTo(step);
  expect(machine.state).toBe(state);
  return machine;
}

describe('session state table', () => {
  it('has one row per state, and every arrow points at a declared state', () => {
    expect(Object.keys(SESSION_TRANSITIONS).sort()).toEqual([...SESSION_STATES].sort());
    for (const targets of Object.values(SESSION_TRANSITIONS)) {
      for (const to of targets) expect(SESSION_STATES).toContain(to);
    }
  });

  it('starts every session in handshake and reaches every state from there', () => {
    expect(new SessionStateMachine().state).toBe('handshake');
    for (const state of SESSION_STATES) expect(() => machineIn(state)).not.toThrow();
  });

  it('declares the lifecycle the coordinator relies on', () => {
    expect(isTransitionAllowed('handshake', 'joined')).toBe(true);
    expect(isTransitionAllowed('handshake', 'refused')).toBe(true);
    expect(isTransitionAllowed('joined', 'active')).toBe(true);
    expect(isTransitionAllowed('active', 'disconnected')).toBe(true);
    expect(isTransitionAllowed('disconnected', 'resumed')).toBe(true);
    expect(isTransitionAllowed('disconnected', 'lost')).toBe(true);
    expect(isTransitionAllowed('active', 'finished')).toBe(true);
    for (const final of ['resumed', 'lost', 'refused', 'finished'] as const)
      expect(SESSION_TRANSITIONS[final]).toEqual([]);
  });

  it('accepts every allowed transition', () => {
    for (const from of SESSION_STATES) {
      for (const to of SESSION_TRANSITIONS[from]) {
        const machine = machineIn(from);
        machine.moveTo(to);
        expect(machine.state).toBe(to);
      }
    }
  });

  it('throws E_SESSION_TRANSITION on every other pair and keeps the state', () => {
    let refused = 0;
    for (const from of SESSION_STATES) {
      for (const to of SESSION_STATES) {
        if (isTransitionAllowed(from, to)) continue;
        const machine = machineIn(from);
        let thrown: unknown = null;
        try {
          machine.moveTo(to);
        } catch (error) {
          thrown = error;
        }
        expect(thrown, `${from} -> ${to}`).toBeInstanceOf(SessionTransitionError);
        expect((thrown as SessionTransitionError).code).toBe('E_SESSION_TRANSITION');
        expect((thrown as SessionTransitionError).message).toContain(`'${from}' to '${to}'`);
        expect(machine.state).toBe(from);
        refused++;
      }
    }
    const allowed = SESSION_STATES.reduce((sum, from) => sum + SESSION_TRANSITIONS[from].length, 0);
    expect(refused + allowed).toBe(SESSION_STATES.length ** 2);
    // Staying put is no transition: a state never lists itself.
    for (const state of SESSION_STATES) expect(isTransitionAllowed(state, state)).toBe(false);
  });
});
