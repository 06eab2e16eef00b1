// Log lines about misbehaving peers, at most one per kind per interval: a peer that opens
// thousands of bad connections must not turn the coordinator's log into its own flood. The
// first line of a kind in an interval is written; the rest are counted, and the count is written
// with the next line of that kind after the interval (or by flush, at the end).

export class LogLimiter {
  private readonly log: (line: string) => void;
  private readonly intervalMs: number;
  private readonly nowMs: () => number;
  /** per kind: when its interval started, and lines suppressed since */
  private readonly kinds = new Map<string, { startedMs: number; suppressed: number }>();

  constructor(log: (line: string) => void, intervalSeconds: number, nowMs: () => number) {
    if (!(intervalSeconds > 0) || !Number.isFinite(intervalSeconds))
      throw new RangeError(
        `intervalSeconds: finite seconds above 0 expected, got ${intervalSeconds}`,
      );
    this.log = log;
    this.intervalMs = intervalSeconds * 1000;
    this.nowMs = nowMs;
  }

  /** Writes `line` unless a line of `kind` was written less than an interval ago. */
  line(kind: string, line: string): void {
    const now = this.nowMs();
    const state = this.kinds.get(kind);
    if (state !== undefined && now - state.startedMs < this.intervalMs) {
      state.suppressed += 1;
      return;
    }
    const suppressed = state?.suppressed ?? 0;
    this.kinds.set(kind, { startedMs: now, suppressed: 0 });
    this.log(
      suppressed === 0 ? line : `${line} (and ${suppressed} more ${kind} since the last such line)`,
    );
  }

  /** Writes the count of every kind's lines suppressed since its last written line. */
  flush(): void {
    for (const [kind, state] of this.kinds) {
      if (state.suppressed > 0) this.log(`${state.suppressed} more ${kind} not logged`);
      state.suppressed = 0;
    }
  }
}
