// What an authenticated connection may send (server/peer-budget.ts): a worker that answers
// each down once and beats its heartbeat never runs out, whatever the pace of the rounds; a
// flood runs out after the unsolicited burst; a large frame without a down's credit is refused by
// its size; bad messages are answered up to the reply burst and drop the peer past their own.

import { describe, expect, it } from 'vitest';
import { CONNECTION_LIMITS, HANDSHAKE_LIMITS } from '../../src/protocol/index.js';
import { PeerBudget } from '../../server/peer-budget.js';

const CONTROL_BYTES = 3_000;
const SMALL_UP_BYTES = 200;
const LARGE_UP_BYTES = 50_000;

describe('PeerBudget', () => {
  it('never refuses a worker that answers every down once, however fast the rounds go', () => {
    const budget = new PeerBudget(0);
    const admissions = new Set<string>();
    // 100,000 exchanges of 8 clients, one every 100 microseconds, with a heartbeat every 5 s
    // (HANDSHAKE_LIMITS.heartbeatIntervalSeconds).
    const heartbeatEvery = (HANDSHAKE_LIMITS.heartbeatIntervalSeconds * 1000) / 0.1;
    for (let exchange = 0; exchange < 100_000; exchange++) {
      const nowMs = exchange * 0.1;
      for (let client = 0; client < 8; client++) budget.grant(1);
      for (let client = 0; client < 8; client++) {
        const bytes = exchange % 2 === 0 ? SMALL_UP_BYTES : LARGE_UP_BYTES;
        admissions.add(budget.admitMessage(nowMs, bytes, CONTROL_BYTES));
      }
      if (exchange % heartbeatEvery === 0)
        admissions.add(budget.admitMessage(nowMs, 30, CONTROL_BYTES));
    }
    expect([...admissions].sort()).toEqual(['control', 'credited']);
  });

  it('refuses a flood of small messages after the unsolicited burst', () => {
    const budget = new PeerBudget(0);
    const admitted = Array.from({ length: 1000 }, () =>
      budget.admitMessage(0, 1, CONTROL_BYTES),
    ).filter((a) => a === 'control').length;
    expect(admitted).toBe(CONNECTION_LIMITS.unsolicitedMessagesBurst);
    expect(budget.admitMessage(0, 1, CONTROL_BYTES)).toBe('over-rate');
  });

  it('marks a frame larger than a control message without a down to answer as uncredited', () => {
    const budget = new PeerBudget(0);
    expect(budget.admitMessage(0, LARGE_UP_BYTES, CONTROL_BYTES)).toBe('uncredited');
    budget.grant(1);
    expect(budget.admitMessage(0, LARGE_UP_BYTES, CONTROL_BYTES)).toBe('credited');
    expect(budget.admitMessage(0, LARGE_UP_BYTES, CONTROL_BYTES)).toBe('uncredited');
  });

  it('answers bad messages up to the reply burst, counts the rest, and drops the peer past its own burst', () => {
    const budget = new PeerBudget(0);
    const verdicts = Array.from({ length: CONNECTION_LIMITS.badMessagesBurst + 1 }, () =>
      budget.badMessage(0),
    );
    expect(verdicts.filter((v) => v === 'reply')).toHaveLength(CONNECTION_LIMITS.errorRepliesBurst);
    expect(verdicts.filter((v) => v === 'silent')).toHaveLength(
      CONNECTION_LIMITS.badMessagesBurst - CONNECTION_LIMITS.errorRepliesBurst,
    );
    expect(verdicts.at(-1)).toBe('drop');
    expect(budget.unansweredBadMessages).toBe(
      CONNECTION_LIMITS.badMessagesBurst - CONNECTION_LIMITS.errorRepliesBurst,
    );
  });

  it('lets a peer that errs rarely err forever', () => {
    const budget = new PeerBudget(0);
    const periodMs = 1000 / CONNECTION_LIMITS.badMessagesPerSecond;
    for (let i = 0; i < 10_000; i++) expect(budget.badMessage(i * periodMs)).not.toBe('drop');
  });
});
