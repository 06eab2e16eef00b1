// The peak resident set of every process of a run: a process and the children it starts (a
// coordinator's local workers), polled from /proc every POLL_INTERVAL_MS until stopped. VmHWM
// only grows, so the last value read before a process ends is the best one there is; a process
// that ends between two polls loses at most one interval of growth.

import { readChildPids, readPeakResidentBytes } from './proc-status.js';

const POLL_INTERVAL_MS = 100;

export interface ProcessPeak {
  pid: number;
  /** the last VmHWM read, in bytes */
  peakResidentBytes: number;
}

export class ProcessTreePeaks {
  private readonly rootPid: number;
  /** pid -> last VmHWM read, in the order the processes were first seen */
  private readonly peaks = new Map<number, number>();
  private readonly timer: NodeJS.Timeout;

  constructor(rootPid: number) {
    this.rootPid = rootPid;
    this.poll();
    this.timer = setInterval(() => this.poll(), POLL_INTERVAL_MS);
  }

  /** One read of the root and of its children, found afresh each time (workers start late). */
  poll(): void {
    for (const pid of [this.rootPid, ...readChildPids(this.rootPid)]) {
      const bytes = readPeakResidentBytes(pid);
      if (bytes !== null) this.peaks.set(pid, bytes);
    }
  }

  /** Stops polling; the root first, then its children in the order they were first seen. */
  stop(): { root: ProcessPeak | null; children: ProcessPeak[] } {
    clearInterval(this.timer);
    const all = [...this.peaks].map(([pid, peakResidentBytes]) => ({ pid, peakResidentBytes }));
    return {
      root: all.find((p) => p.pid === this.rootPid) ?? null,
      children: all.filter((p) => p.pid !== this.rootPid),
    };
  }

  /** The pids seen so far, the root's included, so that a caller can stop them all. */
  pidsSeen(): number[] {
    return [...this.peaks.keys()];
  }
}
