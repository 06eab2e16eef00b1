// The ups answering one downs frame, sent in as few ups frames as the clock allows. Virtual
// clock: time is the models', not the socket's, so nothing is lost by waiting: one frame once
// every client of the downs frame has answered (or been withheld). Wall clock: fastest-k and
// deadlines close on arrivals, so an up must never wait for a slower client: ups that become
// ready in the same event-loop turn (clients whose work or link delay ended together) share a
// frame, sent at the end of that turn (setImmediate), and no up waits longer.

import type { UpEntry } from '../src/protocol/index.js';

export type UpBatchMode = 'frame-done' | 'same-turn';

export class UpBatch {
  private readonly mode: UpBatchMode;
  private readonly send: (entries: UpEntry[]) => void;
  /** clients of the downs frame that have not answered nor been withheld */
  private outstanding: number;
  private pending: UpEntry[] = [];
  private flushScheduled = false;

  /** `send` gets each group of ups, ascending client id. */
  constructor(mode: UpBatchMode, clients: number, send: (entries: UpEntry[]) => void) {
    this.mode = mode;
    this.outstanding = clients;
    this.send = send;
  }

  /** One client's up is ready. */
  add(entry: UpEntry): void {
    this.pending.push(entry);
    this.settleOne();
  }

  /** One client will send nothing for this frame (its up is withheld, or it failed). */
  skip(): void {
    this.settleOne();
  }

  private settleOne(): void {
    this.outstanding -= 1;
    if (this.mode === 'frame-done') {
      if (this.outstanding === 0) this.flush();
      return;
    }
    if (this.flushScheduled || this.pending.length === 0) return;
    this.flushScheduled = true;
    setImmediate(() => {
      this.flushScheduled = false;
      this.flush();
    });
  }

  private flush(): void {
    if (this.pending.length === 0) return;
    const entries = this.pending.sort((a, b) => a.clientId - b.clientId);
    this.pending = [];
    this.send(entries);
  }
}
