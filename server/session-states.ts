// The life of a worker session on the coordinator, as one table of allowed transitions. Every
// change of a session's state goes through SessionStateMachine.moveTo, which checks the table: an
// illegal transition is a bug of the coordinator (a peer's misbehaviour only ever picks a legal
// one), so it throws instead of being logged and skipped.

import { CodedError } from '../src/base/coded-error.js';

export const SESSION_STATES = [
  'handshake',
  'joined',
  'active',
  'disconnected',
  'resumed',
  'lost',
  'refused',
  'finished',
] as const;

/**
 * 'handshake': a fresh connection, before its hello; 'joined': passed the handshake, waiting for
 * the clients to be dealt; 'active': hosts clients in the run; 'disconnected': an active worker's
 * socket closed and it may resume within the grace period; 'resumed': a session whose worker came
 * back on a new connection (that new session is the active one); 'lost', 'refused', 'finished':
 * over, for the reason each name says.
 */
export type SessionState = (typeof SESSION_STATES)[number];

/** From each state, the states a session may move to; an empty list marks a state as final. */
export const SESSION_TRANSITIONS: Readonly<Record<SessionState, readonly SessionState[]>> = {
  // A resuming hello skips 'joined': the new session takes over an active or disconnected one.
  handshake: ['joined', 'active', 'refused'],
  joined: ['active'],
  // 'resumed' straight from 'active' when the worker saw its socket close before this end did.
  active: ['disconnected', 'resumed', 'lost', 'finished'],
  disconnected: ['resumed', 'lost'],
  resumed: [],
  lost: [],
  refused: [],
  finished: [],
};

/** A transition the table does not allow: a bug in the coordinator, never a peer's fault. */
export class SessionTransitionError extends CodedError<'E_SESSION_TRANSITION'> {}

export function isTransitionAllowed(from: SessionState, to: SessionState): boolean {
  return SESSION_TRANSITIONS[from].includes(to);
}

/** One session's state: readable by all, changed only by moveTo along the table. */
export class SessionStateMachine {
  private current: SessionState = 'handshake';

  get state(): SessionState {
    return this.current;
  }

  /** Moves to `to`; throws E_SESSION_TRANSITION when the table has no arrow from the current state. */
  moveTo(to: SessionState): void {
    if (!isTransitionAllowed(this.current, to)) {
      throw new SessionTransitionError(
        'E_SESSION_TRANSITION',
        `a worker session cannot move from '${this.current}' to '${to}'`,
      );
    }
    this.current = to;
  }
}
