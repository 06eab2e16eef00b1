// Waiting for the ups of one exchange. Every wait is bounded: it ends when each expected client
// has answered or left the run, or (wall clock) once the first k have answered (fastest-k) or
// the deadline has passed, and in any case at the exchange time limit.

import type { UpEntry } from '../src/protocol/index.js';
import type { EncodedFields } from '../src/engine/client-runtime.js';

export interface Arrival {
  round: number;
  up: UpEntry;
  encodedUp: EncodedFields;
  /** payload bytes per field */
  fieldPayloadBytes: Record<string, number>;
  payloadBytes: number;
  encodedBytes: number;
  wireBytes: number;
  /** seconds the ups frame that carried it took to arrive, first byte to last */
  streamSeconds: number;
  arrivedMs: number;
}

export type CloseRule =
  | { kind: 'all' }
  /** wall-clock fastest-k: the first k arrivals count */
  | { kind: 'first-k'; k: number }
  /** wall-clock deadline: arrivals after this time are late */
  | { kind: 'until'; closeAtMs: number };

export type CloseCause = 'complete' | 'first-k' | 'deadline' | 'timeout';

export class ExchangeWait {
  readonly round: number;
  readonly exchange: string;
  /** arrivals that made it before the wait closed, by client id */
  readonly arrivals = new Map<number, Arrival>();
  /** arrival order, for fastest-k */
  readonly arrivalOrder: number[] = [];
  readonly lostClientIds = new Set<number>();
  closed = false;
  cause: CloseCause = 'complete';
  closedMs = 0;
  private readonly expected: ReadonlySet<number>;
  /** expected clients that arrived or were lost */
  private settled = 0;
  private readonly rule: CloseRule;
  private readonly timers: NodeJS.Timeout[] = [];
  private readonly now: () => number;
  private resolveDone: () => void = () => undefined;
  readonly done: Promise<void>;

  constructor(
    round: number,
    exchange: string,
    expected: readonly number[],
    rule: CloseRule,
    timeoutSeconds: number,
    now: () => number,
  ) {
    this.round = round;
    this.exchange = exchange;
    this.expected = new Set(expected);
    this.rule = rule;
    this.now = now;
    this.done = new Promise((resolve) => {
      this.resolveDone = resolve;
    });
    this.timers.push(setTimeout(() => this.close('timeout'), timeoutSeconds * 1000));
    if (rule.kind === 'until')
      this.timers.push(
        setTimeout(() => this.close('deadline'), Math.max(0, rule.closeAtMs - now())),
      );
    this.check();
  }

  /** Clients still owing an up (neither arrived nor lost). */
  pending(): number[] {
    return [...this.expected]
      .filter((id) => !this.arrivals.has(id) && !this.lostClientIds.has(id))
      .sort((a, b) => a - b);
  }

  /** How many clients still owe an up: O(1), for the check after every arrival. */
  private pendingCount(): number {
    return this.expected.size - this.settled;
  }

  deliver(clientId: number, arrival: Arrival): void {
    if (this.closed) return;
    if (!this.arrivals.has(clientId) && !this.lostClientIds.has(clientId)) this.settled += 1;
    this.arrivals.set(clientId, arrival);
    this.arrivalOrder.push(clientId);
    this.check();
  }

  lose(clientId: number): void {
    if (this.closed || !this.expected.has(clientId)) return;
    if (!this.arrivals.has(clientId) && !this.lostClientIds.has(clientId)) this.settled += 1;
    this.lostClientIds.add(clientId);
    this.check();
  }

  private check(): void {
    if (this.rule.kind === 'first-k' && this.arrivals.size >= this.rule.k) this.close('first-k');
    else if (this.pendingCount() === 0) this.close('complete');
  }

  private close(cause: CloseCause): void {
    if (this.closed) return;
    this.closed = true;
    this.cause = cause;
    this.closedMs = this.now();
    for (const t of this.timers) clearTimeout(t);
    this.resolveDone();
  }
}
