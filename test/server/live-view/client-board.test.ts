// The client board: one state per client as a round goes (sending, computing, waiting, dropped),
// a lost client staying lost until its worker resumes, and a change seen once.

import { describe, expect, it } from 'vitest';
import { CLIENT_STATES, ClientBoard } from '../../../server/live-view/client-board.js';

/** The board's digits as state names. */
function states(board: ClientBoard): string[] {
  return [...board.digits()].map((digit) => CLIENT_STATES[Number(digit)]);
}

describe('ClientBoard', () => {
  it('follows an exchange: sending, computing once written, waiting, dropped when it closes', () => {
    const board = new ClientBoard(4);
    expect(states(board)).toEqual(['idle', 'idle', 'idle', 'idle']);
    board.exchangeStarted([0, 1, 2]);
    expect(states(board)).toEqual(['sending', 'sending', 'sending', 'idle']);
    board.set(1, 'waiting');
    board.written([0, 1, 2]);
    // An up that came before its down's write was confirmed stays waiting.
    expect(states(board)).toEqual(['computing', 'waiting', 'computing', 'idle']);
    board.set(2, 'dropped');
    expect(states(board)).toEqual(['computing', 'waiting', 'dropped', 'idle']);
    board.exchangeStarted([3]);
    expect(states(board)).toEqual(['idle', 'idle', 'idle', 'sending']);
  });

  it('keeps a lost client lost until it rejoins', () => {
    const board = new ClientBoard(3);
    board.lost([1]);
    board.exchangeStarted([0, 1, 2]);
    board.set(1, 'waiting');
    expect(states(board)).toEqual(['sending', 'lost', 'sending']);
    board.rejoined([1]);
    expect(states(board)).toEqual(['sending', 'idle', 'sending']);
  });

  it('reports a change once', () => {
    const board = new ClientBoard(2);
    expect(board.takeChange()).toBe('00');
    expect(board.takeChange()).toBeNull();
    board.set(0, 'computing');
    expect(board.takeChange()).toBe(`${CLIENT_STATES.indexOf('computing')}0`);
    expect(board.takeChange()).toBeNull();
  });
});
