// A run's records kept in memory, for tests that look at every round of a short run without a
// results folder (a real run streams them to rounds.jsonl and clients.jsonl instead).
import type { ClientRoundRecord, RecordSink, RoundRecord } from '../../src/engine/round-record.js';

export class RecordList implements RecordSink {
  readonly rounds: RoundRecord[] = [];
  readonly clients: ClientRoundRecord[] = [];

  append(record: RoundRecord, clients: readonly ClientRoundRecord[]): void {
    this.rounds.push(record);
    this.clients.push(...clients);
  }
}
