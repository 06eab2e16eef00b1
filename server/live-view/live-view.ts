// The live view of a distributed run: what the coordinator publishes and when. The round driver
// and the coordinator write client states to the board as they happen; a timer sends the board
// when it changed (TILES_INTERVAL_MS), and the round records and the end go out as they come.
// Nothing here is awaited by the rounds: every send is queued on the viewers' sockets.

import type { HostPort } from '../../runtime/address.js';
import type { RunPlan } from '../../src/engine/run-plan.js';
import type { ClientRoundRecord, RoundRecord } from '../../src/engine/round-record.js';
import type { RunSummary } from '../../src/engine/run-summary.js';
import { gapIsToReference, gapName } from '../../src/report/gap-name.js';
import { liveViewPage } from '../../src/report/live-view-page.js';
import { speedModelFor } from '../../src/timing/round-speed.js';
import { ClientBoard, CLIENT_STATES } from './client-board.js';
import { FEED_LIMITS, ViewFeed, type FeedLimits } from './view-feed.js';
import { startViewServer, type ViewServer } from './view-server.js';

/** How often a changed board goes out: often enough to watch a round, rarely enough to be cheap. */
export const TILES_INTERVAL_MS = 100;

/** How long closing waits for viewers to take the last events before cutting them off. */
const CLOSE_WAIT_MS = 2000;

export interface LiveViewOptions {
  address: HostPort;
  key: Uint8Array;
  clientCount: number;
  log: (line: string) => void;
  feedLimits?: FeedLimits;
}

export class LiveView {
  readonly board: ClientBoard;
  readonly feed: ViewFeed;
  private readonly server: ViewServer;
  private readonly timer: NodeJS.Timeout;
  private previousWallSeconds = 0;

  private constructor(board: ClientBoard, feed: ViewFeed, server: ViewServer) {
    this.board = board;
    this.feed = feed;
    this.server = server;
    this.timer = setInterval(() => this.sendTiles(), TILES_INTERVAL_MS);
    this.timer.unref();
  }

  /** Starts listening; rejects with a ListenError when the address cannot be had. */
  static async start(options: LiveViewOptions): Promise<LiveView> {
    const feed = new ViewFeed(options.feedLimits ?? FEED_LIMITS, {
      onDropped: (queuedBytes) =>
        options.log(`live view: dropped a viewer that fell behind (${queuedBytes} bytes queued)`),
    });
    const server = await startViewServer({
      address: options.address,
      key: options.key,
      feed,
      page: liveViewPage(),
      log: options.log,
    });
    return new LiveView(new ClientBoard(options.clientCount), feed, server);
  }

  /** The page's URL (with the view token in its fragment when listening beyond loopback). */
  get url(): string {
    return this.server.url;
  }

  get keyRequired(): boolean {
    return this.server.keyRequired;
  }

  /** The line a command prints once the view listens. */
  listeningLine(): string {
    const rule = this.keyRequired
      ? ' (beyond loopback: the link carries a view token derived from the key; share it only with your audience)'
      : '';
    return `live view on ${this.url}${rule}\n`;
  }

  /** The run's description; `workers` lists who hosts which clients. */
  runStarted(plan: RunPlan, workers: readonly { workerName: string; clientIds: number[] }[]): void {
    const scenario = plan.scenario;
    const speed = speedModelFor(scenario.timing, plan.clientCount, scenario.seed);
    this.feed.publishHeader({
      kind: 'run',
      scenario: scenario.name,
      description: scenario.description ?? '',
      method: scenario.method.name,
      clients: plan.clientCount,
      roundsMax: scenario.run.rounds,
      target: scenario.run.target,
      clock: scenario.timing.clock,
      policy: scenario.timing.policy.kind,
      gapName: gapName(gapIsToReference(scenario.problem.kind)),
      states: CLIENT_STATES,
      // s_i, rounded: the page sizes and labels tiles by speed, to a hundredth.
      slowdowns: Array.from(speed.slowdowns, (s) => Math.round(s * 100) / 100),
      workers: workers.map((w) => ({ name: w.workerName, clients: w.clientIds.length })),
    });
  }

  /** One round's record with its clients' (round 0, the initial evaluation, has none). */
  roundRecorded(record: RoundRecord, clients: readonly ClientRoundRecord[]): void {
    this.sendTiles();
    const wallSeconds = record.wallSeconds - this.previousWallSeconds;
    this.previousWallSeconds = record.wallSeconds;
    const held = heldBackBy(record, clients);
    this.feed.publishRound({
      kind: 'round',
      round: record.round,
      gap: record.suboptimality,
      predicted: record.predictedSuboptimality,
      bytes: record.bytes,
      wallSeconds,
      roundSeconds: record.roundSeconds,
      participants: Object.keys(record.localSteps).length,
      dropped: record.dropped.length,
      heldBy: held?.clientId ?? null,
      heldBySeconds: held?.seconds ?? null,
    });
  }

  /** The figures outcome.json holds: the page's final state shows these. */
  ended(summary: RunSummary): void {
    this.sendTiles();
    this.feed.publishEnd({
      kind: 'end',
      stopReason: summary.stopReason,
      rounds: summary.rounds,
      finalGap: Number.isFinite(summary.suboptimality.final) ? summary.suboptimality.final : null,
      bytes: summary.bytes,
    });
  }

  /** Lets the viewers take what they were sent (bounded), then closes everything. */
  async close(): Promise<void> {
    clearInterval(this.timer);
    const closing = this.feed.closeAll('the run is over');
    await Promise.race([closing, new Promise((done) => setTimeout(done, CLOSE_WAIT_MS))]);
    await this.server.close();
  }

  private sendTiles(): void {
    const states = this.board.takeChange();
    if (states !== null) this.feed.publishTiles({ kind: 'tiles', states });
  }
}

/**
 * The client the round waited for last: of those whose update counted, the largest compute plus
 * transfer seconds over the round's exchanges (a dropped client held nobody back).
 */
function heldBackBy(
  record: RoundRecord,
  clients: readonly ClientRoundRecord[],
): { clientId: number; seconds: number } | null {
  const dropped = new Set(record.dropped);
  const busy = new Map<number, number>();
  for (const c of clients) {
    if (dropped.has(c.clientId)) continue;
    busy.set(c.clientId, (busy.get(c.clientId) ?? 0) + c.computeSeconds + c.transferSeconds);
  }
  let held: { clientId: number; seconds: number } | null = null;
  for (const [clientId, seconds] of busy)
    if (held === null || seconds > held.seconds) held = { clientId, seconds };
  return held;
}
