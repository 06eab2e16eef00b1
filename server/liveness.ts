// Heartbeats: every interval the coordinator sends each active worker a heartbeat and checks
// when it last heard from it; a worker silent past the limit is lost at once (a closed socket
// is noticed through the session's close event, not here, and may resume within a grace).
// Silence is counted from start() at the earliest: a worker begins its heartbeats with the
// welcome, so the time it spent waiting for others to join is no silence.

import type { WorkerSession } from './worker-session.js';

export interface LivenessOptions {
  intervalSeconds: number;
  silenceSeconds: number;
  sessions: () => readonly WorkerSession[];
  sendHeartbeat: (session: WorkerSession) => void;
  onSilent: (session: WorkerSession) => void;
  nowMs: () => number;
}

export class Liveness {
  private readonly options: LivenessOptions;
  private timer: NodeJS.Timeout | null = null;
  private startedMs = 0;

  constructor(options: LivenessOptions) {
    this.options = options;
  }

  start(): void {
    if (this.timer !== null) return;
    this.startedMs = this.options.nowMs();
    this.timer = setInterval(() => this.beat(), this.options.intervalSeconds * 1000);
    // Heartbeats alone must not keep the process alive.
    this.timer.unref();
  }

  stop(): void {
    if (this.timer !== null) clearInterval(this.timer);
    this.timer = null;
  }

  private beat(): void {
    const now = this.options.nowMs();
    for (const session of this.options.sessions()) {
      if (now - Math.max(session.lastHeardMs, this.startedMs) > this.options.silenceSeconds * 1000)
        this.options.onSilent(session);
      else this.options.sendHeartbeat(session);
    }
  }
}
