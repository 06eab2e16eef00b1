// Holds a round's records back from the results files while one of its clients may still send
// a late up (wall clock: a client past fastest-k or a deadline), whose bytes and seconds then
// fill in that client's record, as they always have in clients.jsonl. Records go out in round
// order, each round as soon as nothing it holds is awaited; a virtual-clock run, where no wait
// closes early, holds nothing. The hold is bounded: past ROUNDS_HELD_MAX rounds the oldest goes
// out as it is, so a client that never sends its late up cannot make memory grow with the run.

import type { ClientRoundRecord, RecordSink, RoundRecord } from '../src/engine/round-record.js';

/**
 * Rounds held at most. A late up comes before its client's next up (one socket, in order), so
 * a hold spans the few rounds a slow client lags behind; 64 rounds of records stay small.
 */
export const ROUNDS_HELD_MAX = 64;

interface HeldRound {
  record: RoundRecord;
  clients: readonly ClientRoundRecord[];
}

export class LateUpHold {
  private readonly sink: RecordSink;
  private readonly awaited: () => ReadonlySet<ClientRoundRecord>;
  private readonly held: HeldRound[] = [];

  /** `awaited`: the client records a late up may still fill in. */
  constructor(sink: RecordSink, awaited: () => ReadonlySet<ClientRoundRecord>) {
    this.sink = sink;
    this.awaited = awaited;
  }

  /** A finished round: out now, unless it or a round before it awaits a late up. */
  add(record: RoundRecord, clients: readonly ClientRoundRecord[]): void {
    this.held.push({ record, clients });
    const awaited = this.awaited();
    while (this.held.length > 0) {
      const oldest = this.held[0];
      if (this.held.length <= ROUNDS_HELD_MAX && oldest.clients.some((c) => awaited.has(c))) break;
      this.release();
    }
  }

  /** Every round still held, as it is: the run is over and no up comes any more. */
  flush(): void {
    while (this.held.length > 0) this.release();
  }

  private release(): void {
    const { record, clients } = this.held.shift()!;
    this.sink.append(record, clients);
  }
}
