// The live view's push channel: every event is serialized once and sent to every viewer, never
// awaited. Each viewer is held to a queue limit in bytes (what its socket has not yet written
// out); one that falls past it is dropped, so that a viewer that stops reading costs the run
// one closed socket and nothing else. A viewer that joins (or rejoins) first gets the history:
// the run's header, the last HISTORY_ROUNDS_MAX rounds, the latest tiles and the end if any.

import type { WebSocket } from 'ws';

export interface FeedLimits {
  /** bytes queued for one viewer past which it is dropped */
  viewerQueueBytesMax: number;
  /** rounds kept for a viewer that joins late (older rounds are forgotten, oldest first) */
  historyRoundsMax: number;
}

export const FEED_LIMITS: FeedLimits = {
  // A full history (below) is about 1.5 MB; a viewer gets all of it on joining and twice that
  // again before it counts as behind.
  viewerQueueBytesMax: 4 * 1024 * 1024,
  historyRoundsMax: 5000,
};

export interface FeedEvents {
  /** a viewer was dropped for falling behind, with the bytes it had queued */
  onDropped?: (queuedBytes: number) => void;
}

/** An event as the bytes of its JSON text, encoded once for every viewer. */
function serialized(event: object): Buffer {
  return Buffer.from(JSON.stringify(event));
}

export class ViewFeed {
  private readonly limits: FeedLimits;
  private readonly events: FeedEvents;
  private readonly viewers = new Set<WebSocket>();
  private header: Buffer | null = null;
  /** serialized round events, oldest first, at most historyRoundsMax */
  private readonly rounds: Buffer[] = [];
  private tiles: Buffer | null = null;
  private end: Buffer | null = null;
  private droppedCount = 0;

  constructor(limits: FeedLimits = FEED_LIMITS, events: FeedEvents = {}) {
    this.limits = limits;
    this.events = events;
  }

  /** The run's description, sent first to every viewer. */
  publishHeader(event: object): void {
    this.header = serialized(event);
    this.broadcast(this.header);
  }

  publishRound(event: object): void {
    const text = serialized(event);
    this.rounds.push(text);
    if (this.rounds.length > this.limits.historyRoundsMax) this.rounds.shift();
    this.broadcast(text);
  }

  /** The latest tiles replace the earlier ones: a late viewer needs only these. */
  publishTiles(event: object): void {
    this.tiles = serialized(event);
    this.broadcast(this.tiles);
  }

  publishEnd(event: object): void {
    this.end = serialized(event);
    this.broadcast(this.end);
  }

  /** Admits a viewer that passed its hello: it gets the history, then every event. */
  add(viewer: WebSocket): void {
    this.viewers.add(viewer);
    viewer.once('close', () => this.viewers.delete(viewer));
    for (const text of this.history()) if (!this.send(viewer, text)) return;
  }

  viewerCount(): number {
    return this.viewers.size;
  }

  /** Viewers dropped so far for falling behind. */
  dropped(): number {
    return this.droppedCount;
  }

  /**
   * Closes every viewer once what it was sent is written out (1000, normal closure); resolves
   * when all have closed.
   */
  closeAll(reason: string): Promise<void> {
    const closed = [...this.viewers].map(
      (viewer) => new Promise<void>((done) => viewer.once('close', () => done())),
    );
    for (const viewer of this.viewers) viewer.close(1000, reason);
    return Promise.all(closed).then(() => undefined);
  }

  private *history(): Generator<Buffer> {
    if (this.header !== null) yield this.header;
    yield* this.rounds;
    if (this.tiles !== null) yield this.tiles;
    if (this.end !== null) yield this.end;
  }

  private broadcast(text: Buffer): void {
    for (const viewer of this.viewers) this.send(viewer, text);
  }

  /** Sends unless the viewer is behind, in which case it is dropped; false when dropped. */
  private send(viewer: WebSocket, text: Buffer): boolean {
    if (viewer.readyState !== viewer.OPEN) return false;
    // ws's bufferedAmount reads two counters: O(1), whatever is queued.
    const queuedBytes = viewer.bufferedAmount;
    if (queuedBytes + text.byteLength > this.limits.viewerQueueBytesMax) {
      // Terminated, not closed: a viewer that does not read would not read a close frame either.
      this.viewers.delete(viewer);
      this.droppedCount++;
      viewer.terminate();
      this.events.onDropped?.(queuedBytes);
      return false;
    }
    viewer.send(text, { binary: false });
    return true;
  }
}
