// One run of the scale suite: `roundwire run` (the compiled CLI) as a child process, in process
// or as a coordinator with its local workers, measured from outside and from its own records.
// - setup: wall seconds from the spawn until the run prints round 0 (the initial model's
//   evaluation, just before the first round's work), read from its progress lines;
// - rounds per second: rounds / (wallSeconds of the last round - wallSeconds of round 0), from
//   rounds.jsonl, read back through the round record's schema;
// - peak RSS of every process (process-tree-peaks.ts);
// - total seconds, spawn to exit, when the run is let finish.
// A run that is not let finish is stopped (SIGKILL, the coordinator and every worker seen) once
// its last round is recorded: what follows (the prediction, outcome.json, report.html) is not
// what the suite measures, and on a round map of millions of entries the prediction alone
// takes minutes.
//
// Every run gets a fresh oracle cache folder, so that each setup is cold and the two runtimes
// of one scenario pay the same.

import { spawn } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { createInterface } from 'node:readline';
import { roundRecordSchema, type RoundRecord } from '../../src/engine/round-record.js';
import { ProcessTreePeaks, type ProcessPeak } from './process-tree-peaks.js';
import { repositoryRoot } from './repository-root.js';

export type ScaleRuntime = 'in-process' | 'distributed';

export interface ScaleRunSpec {
  /** a scenario file */
  scenarioPath: string;
  runtime: ScaleRuntime;
  /** the scenario's run.rounds */
  rounds: number;
  /** let the run end by itself (total seconds measured) rather than stop it after its last round */
  untilExit: boolean;
  /** longest the run may take before it is stopped and the case fails */
  secondsMax: number;
}

export interface ScaleRunMeasures {
  setupSeconds: number;
  roundsPerSecond: number;
  /** spawn to exit; null when the run was stopped after its last round */
  totalSeconds: number | null;
  /** the process `roundwire run` started as */
  root: ProcessPeak;
  /** its child processes (a distributed run's local workers), in the order first seen */
  children: ProcessPeak[];
}

/** Progress lines keep to "round R/N  ..." on a pipe (src/commands/progress.ts). */
const PROGRESS_LINE = /^round (\d+)\/(\d+)\s/;
/** stderr lines kept for the message of a run that fails */
const STDERR_TAIL_LINES = 20;

function readRoundRecords(folder: string): RoundRecord[] {
  const text = readFileSync(join(folder, 'rounds.jsonl'), 'utf8');
  return text
    .split('\n')
    .filter((line) => line !== '')
    .map((line, i) => {
      const parsed = roundRecordSchema.safeParse(JSON.parse(line));
      if (!parsed.success)
        throw new Error(`bench: rounds.jsonl line ${i + 1}: ${parsed.error.message}`);
      return parsed.data;
    });
}

/** Whether a pid still names a roundwire process (not a pid the system has since given away). */
function isRoundwireProcess(pid: number): boolean {
  try {
    return readFileSync(`/proc/${pid}/cmdline`, 'utf8').includes('roundwire');
  } catch {
    return false;
  }
}

function stopProcesses(pids: number[]): void {
  for (const pid of pids) {
    if (!isRoundwireProcess(pid)) continue;
    try {
      process.kill(pid, 'SIGKILL');
    } catch (error) {
      if ((error as NodeJS.ErrnoException).code !== 'ESRCH') throw error;
    }
  }
}

export async function measureScaleRun(spec: ScaleRunSpec): Promise<ScaleRunMeasures> {
  const root = repositoryRoot();
  const out = mkdtempSync(join(tmpdir(), 'roundwire-bench-scale-'));
  const cacheDir = mkdtempSync(join(tmpdir(), 'roundwire-bench-scale-cache-'));
  const args = [join(root, 'bin', 'roundwire.js'), 'run', spec.scenarioPath, '--out', out];
  if (spec.runtime === 'in-process') args.push('--in-process');
  const startedMs = performance.now();
  const child = spawn(process.execPath, args, {
    cwd: root,
    env: { ...process.env, ROUNDWIRE_CACHE_DIR: cacheDir },
    stdio: ['ignore', 'ignore', 'pipe'],
  });
  const exited = new Promise<number | null>((resolve) => child.on('exit', resolve));
  const peaks = new ProcessTreePeaks(child.pid!);
  let timedOut = false;
  const timer = setTimeout(() => {
    timedOut = true;
    stopProcesses(peaks.pidsSeen());
  }, spec.secondsMax * 1000);
  const stderrTail: string[] = [];
  let setupSeconds: number | null = null;
  let lastRoundRecorded = false;
  try {
    for await (const line of createInterface({ input: child.stderr })) {
      stderrTail.push(line);
      if (stderrTail.length > STDERR_TAIL_LINES) stderrTail.shift();
      const progress = PROGRESS_LINE.exec(line);
      if (progress === null) continue;
      const round = Number(progress[1]);
      if (round === 0 && setupSeconds === null)
        setupSeconds = (performance.now() - startedMs) / 1000;
      if (round === spec.rounds && !lastRoundRecorded) {
        lastRoundRecorded = true;
        peaks.poll();
        if (!spec.untilExit) stopProcesses(peaks.pidsSeen());
      }
    }
    const code = await exited;
    const totalSeconds = (performance.now() - startedMs) / 1000;
    const failed =
      timedOut || setupSeconds === null || !lastRoundRecorded || (spec.untilExit && code !== 0);
    if (failed)
      throw new Error(
        `bench: ${spec.runtime} run of ${spec.scenarioPath} ${timedOut ? `passed ${spec.secondsMax} s` : `ended with code ${code}`}:\n${stderrTail.join('\n')}`,
      );
    const { root: rootPeak, children } = peaks.stop();
    // The last poll ran while the run was alive; the root's first read precedes its exit.
    if (rootPeak === null) throw new Error('bench: the run ended before its memory was read');
    const records = readRoundRecords(out);
    const first = records.find((r) => r.round === 0);
    const last = records.find((r) => r.round === spec.rounds);
    if (first === undefined || last === undefined)
      throw new Error(`bench: rounds.jsonl lacks round 0 or round ${spec.rounds}`);
    return {
      setupSeconds: setupSeconds!,
      roundsPerSecond: spec.rounds / (last.wallSeconds - first.wallSeconds),
      totalSeconds: spec.untilExit ? totalSeconds : null,
      root: rootPeak,
      children,
    };
  } finally {
    clearTimeout(timer);
    peaks.stop();
    stopProcesses(peaks.pidsSeen());
    rmSync(out, { recursive: true, force: true });
    rmSync(cacheDir, { recursive: true, force: true });
  }
}
