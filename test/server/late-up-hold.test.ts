// The hold in front of the record stream (server/late-up-hold.ts): rounds go out in round order,
// a round waits while one of its client records awaits a late up, and the hold never keeps more
// than ROUNDS_HELD_MAX rounds.
import { describe, expect, it } from 'vitest';
import { LateUpHold, ROUNDS_HELD_MAX } from '../../server/late-up-hold.js';
import type { ClientRoundRecord, RoundRecord } from '../../src/engine/round-record.js';
import { RecordList } from '../support/record-list.js';

function round(r: number): { record: RoundRecord; clients: ClientRoundRecord[] } {
  return {
    record: {
      round: r,
      suboptimality: null,
      distance: null,
      predictedSuboptimality: null,
      bytes: { payload: { up: 0, down: 0 } },
      localSteps: {},
      dropped: [],
      roundSeconds: 0,
      virtualSeconds: 0,
      wallSeconds: 0,
    },
    clients: [
      {
        round: r,
        exchange: 'local',
        clientId: 0,
        localSteps: 1,
        computeSeconds: 0,
        waitSeconds: 0,
        transferSeconds: 0,
        bytes: { payload: { up: 0, down: 0 } },
        dropped: false,
      },
    ],
  };
}

describe('LateUpHold', () => {
  it('passes rounds through at once when nothing is awaited', () => {
    const sink = new RecordList();
    const hold = new LateUpHold(sink, () => new Set());
    for (let r = 0; r < 3; r++) hold.add(round(r).record, round(r).clients);
    expect(sink.rounds.map((x) => x.round)).toEqual([0, 1, 2]);
  });

  it('holds a round and those after it while its record awaits a late up, and writes what the up filled in', () => {
    const sink = new RecordList();
    const awaited = new Set<ClientRoundRecord>();
    const hold = new LateUpHold(sink, () => awaited);
    const first = round(1);
    awaited.add(first.clients[0]);
    hold.add(first.record, first.clients);
    const second = round(2);
    hold.add(second.record, second.clients);
    expect(sink.rounds).toEqual([]);
    // The late up arrives: its bytes fill in the held record, which is awaited no more.
    first.clients[0].bytes.payload.up = 123;
    awaited.clear();
    const third = round(3);
    hold.add(third.record, third.clients);
    expect(sink.rounds.map((x) => x.round)).toEqual([1, 2, 3]);
    expect(sink.clients[0].bytes.payload.up).toBe(123);
  });

  it('keeps at most ROUNDS_HELD_MAX rounds: past it the oldest goes out as it is', () => {
    const sink = new RecordList();
    const stuck = round(0);
    const hold = new LateUpHold(sink, () => new Set([stuck.clients[0]]));
    hold.add(stuck.record, stuck.clients);
    for (let r = 1; r < ROUNDS_HELD_MAX; r++) hold.add(round(r).record, round(r).clients);
    expect(sink.rounds).toEqual([]);
    // One round past the bound: the stuck round goes out, and the rounds behind it with it.
    hold.add(round(ROUNDS_HELD_MAX).record, round(ROUNDS_HELD_MAX).clients);
    expect(sink.rounds.map((x) => x.round)).toEqual(
      Array.from({ length: ROUNDS_HELD_MAX + 1 }, (_, r) => r),
    );
  });

  it('flush writes every round still held, in order', () => {
    const sink = new RecordList();
    const stuck = round(0);
    const hold = new LateUpHold(sink, () => new Set([stuck.clients[0]]));
    hold.add(stuck.record, stuck.clients);
    hold.add(round(1).record, round(1).clients);
    expect(sink.rounds).toEqual([]);
    hold.flush();
    expect(sink.rounds.map((x) => x.round)).toEqual([0, 1]);
  });
});
