// The files a run writes as it goes: rounds.jsonl and clients.jsonl, opened when its first
// round starts (created, or, to resume, reopened and cut back to a checkpoint's offsets), and
// checkpoint.bin with the records' offsets at the checkpoint's round. Both runtimes and both
// commands that run (run, coordinator) and resume keep their files through this one class.

import type { Scenario } from '../scenario/schema.js';
import type { RunState } from '../engine/run-state.js';
import { RecordStream } from '../results/record-stream.js';
import { rmSync } from 'node:fs';
import { join } from 'node:path';
import type { StopReason } from '../engine/run-summary.js';
import {
  CHECKPOINT_FILE,
  writeCheckpoint,
  type CheckpointRecords,
} from '../results/checkpoint-file.js';

export class RunFiles {
  private readonly outDir: string;
  private readonly scenario: Scenario;
  private readonly resumeAt: CheckpointRecords | null;
  private stream: RecordStream | null = null;
  /** the round of the last checkpoint written (or resumed from), null before any */
  lastCheckpointRound: number | null;

  /** `resumeFrom`: the checkpoint a resumed run goes on from (its records are cut back to it). */
  constructor(
    outDir: string,
    scenario: Scenario,
    resumeFrom: { round: number; records: CheckpointRecords } | null = null,
  ) {
    this.outDir = outDir;
    this.scenario = scenario;
    this.resumeAt = resumeFrom?.records ?? null;
    this.lastCheckpointRound = resumeFrom?.round ?? null;
  }

  /** The records' stream, opened on first use. */
  records(): RecordStream {
    this.stream ??=
      this.resumeAt === null
        ? RecordStream.create(this.outDir)
        : RecordStream.reopen(this.outDir, this.resumeAt);
    return this.stream;
  }

  /** Writes checkpoint.bin for `state`, after the records up to its round are on the disk. */
  keepCheckpoint(state: RunState): void {
    const records = this.records();
    records.sync();
    writeCheckpoint(this.outDir, { state, records: records.offsets() }, this.scenario);
    this.lastCheckpointRound = state.round;
  }

  close(): void {
    this.stream?.close();
  }

  /**
   * A run that reached its end (its rounds, its target) has nothing left to resume: its
   * checkpoint goes. One that stopped otherwise (interrupted, its workers lost, diverged) keeps it.
   */
  ended(stopReason: StopReason): void {
    if (stopReason === 'rounds-complete' || stopReason === 'target-reached')
      rmSync(join(this.outDir, CHECKPOINT_FILE), { force: true });
  }

  /** The line an interrupted run ends with: where it stopped and how to go on. */
  resumeAdvice(signal: string): string {
    if (this.lastCheckpointRound === null)
      return `interrupted by ${signal} before any checkpoint; partial results in ${this.outDir}`;
    return `interrupted by ${signal}; checkpoint after round ${this.lastCheckpointRound} in ${this.outDir}; go on with: roundwire resume ${this.outDir}`;
  }
}
