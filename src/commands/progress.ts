// Live progress of a run. On a terminal one line is redrawn in place (round, suboptimality,
// bytes, ETA); elsewhere (a pipe, a CI log) plain lines are printed every so often, so that logs
// stay readable. No colour is used, so NO_COLOR needs no special case here.

import type { RoundRecord } from '../engine/round-record.js';
import { formatNumber } from '../report/text-table.js';
import { gapName } from '../report/gap-name.js';

export interface ProgressSink {
  write(text: string): void;
  isTTY: boolean;
}

export function formatBytes(bytes: number): string {
  const units = ['B', 'KiB', 'MiB', 'GiB', 'TiB'];
  let value = bytes;
  let unit = 0;
  while (value >= 1024 && unit < units.length - 1) {
    value /= 1024;
    unit++;
  }
  return `${unit === 0 ? value : value.toFixed(1)} ${units[unit]}`;
}

export class ProgressLine {
  private readonly sink: ProgressSink;
  private readonly roundsMax: number;
  private bytesTotal = 0;
  private lastSuboptimality: number | null = null;
  /** non-TTY: print at most this many lines per run */
  private readonly plainLinesMax = 20;
  /** TTY: redraw at most this often, so that fast runs do not flood the terminal */
  private readonly redrawIntervalSeconds = 0.1;
  private lastDrawWallSeconds = -Infinity;
  /** "f-f*", or "f-f_ref" where the gap is to a reference run's loss (gap-name.ts) */
  private readonly gapLabel: string;

  constructor(sink: ProgressSink, roundsMax: number, gapToReference = false) {
    this.sink = sink;
    this.roundsMax = roundsMax;
    this.gapLabel = gapName(gapToReference, true);
  }

  update(record: RoundRecord): void {
    this.bytesTotal += record.bytes.payload.up + record.bytes.payload.down;
    if (record.suboptimality !== null) this.lastSuboptimality = record.suboptimality;
    const perRound = record.round > 0 ? record.wallSeconds / record.round : 0;
    const etaSeconds = perRound * (this.roundsMax - record.round);
    const text = `round ${record.round}/${this.roundsMax}  ${this.gapLabel} ${formatNumber(this.lastSuboptimality)}  payload ${formatBytes(this.bytesTotal)}  virtual ${formatNumber(record.virtualSeconds)} s  eta ${etaSeconds.toFixed(1)} s`;
    if (this.sink.isTTY) {
      if (
        record.wallSeconds - this.lastDrawWallSeconds < this.redrawIntervalSeconds &&
        record.round !== this.roundsMax
      )
        return;
      this.lastDrawWallSeconds = record.wallSeconds;
      this.sink.write(`\r\x1b[2K${text}`);
      return;
    }
    const every = Math.max(1, Math.ceil(this.roundsMax / this.plainLinesMax));
    if (record.round % every === 0 || record.round === this.roundsMax) this.sink.write(`${text}\n`);
  }

  finish(): void {
    if (this.sink.isTTY) this.sink.write('\n');
  }
}
