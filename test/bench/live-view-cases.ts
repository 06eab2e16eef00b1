// `npm run bench -- --suite view`: what 50 viewers of the live view cost a 1,000-client run.
// One distributed run (`roundwire run --view 0`, the compiled CLI, a coordinator and 2 local
// workers, virtual clock) is measured in two phases: its rounds before any viewer, then, once
// 50 viewers are connected and have taken the history, its rounds with them, every viewer
// reading every event. Rounds per second of each phase come from rounds.jsonl (wallSeconds);
// one run, so that both phases meet the same machine and the same warmed-up processes. Beside
// them, rounds per CPU second of the coordinator (the process that serves the viewers; utime +
// stime of /proc/PID/stat, proc(5), read at the progress lines that bound each phase): steadier
// than wall time when other work shares the machine. The target is the issue's: within 5% of the
// rate without viewers.

import { execFileSync, spawn } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createInterface } from 'node:readline';
import { WebSocket } from 'ws';
import { roundRecordSchema } from '../../src/engine/round-record.js';
import { benchTarget, type BenchResult } from './bench-report.js';
import { repositoryRoot } from './repository-root.js';
import { FULL_SCALE_SCENARIOS, scaleScenarioText } from './scale-cases.js';

const VIEWERS = 50;
const ROUNDS = 90;
/** The viewers connect once the run has printed this round. */
const VIEWERS_FROM_ROUND = 30;
/**
 * The first rounds are left out of the phase without viewers: the processes warm up. A
 * multiple of the progress lines' stride (ROUNDS / 20 rounds, src/commands/progress.ts).
 */
const WARMUP_ROUNDS = 5;
/** rounds per second with viewers / without, at least (issue 16: within 5%) */
const RATIO_MIN = 0.95;
const RUN_SECONDS_MAX = 600;
const PROGRESS_LINE = /^round (\d+)\/(\d+)\s/;

interface Viewer {
  socket: WebSocket;
  events: number;
  admitted: Promise<void>;
  closed: boolean;
}

function connectViewer(url: string): Viewer {
  const socket = new WebSocket(`${url.replace(/^http/, 'ws')}feed`);
  const viewer: Viewer = { socket, events: 0, admitted: Promise.resolve(), closed: false };
  viewer.admitted = new Promise((resolve, reject) => {
    socket.once('error', reject);
    socket.once('open', () => socket.send('{}'));
    socket.on('message', () => {
      viewer.events++;
      resolve();
    });
    socket.once('close', () => {
      viewer.closed = true;
      reject(new Error('bench: a viewer was closed before it was admitted'));
    });
  });
  return viewer;
}

/** CPU seconds (user + system) a live process has used: proc(5), /proc/PID/stat fields 14 and 15. */
function cpuSecondsOf(pid: number, ticksPerSecond: number): number {
  const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
  // The command name (field 2) may hold spaces and parentheses: fields count from its end.
  const fields = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
  return (Number(fields[11]) + Number(fields[12])) / ticksPerSecond;
}

function rate(walls: Map<number, number>, from: number, to: number): number {
  return (to - from) / (walls.get(to)! - walls.get(from)!);
}

export async function runLiveViewBench(): Promise<BenchResult[]> {
  const scale = FULL_SCALE_SCENARIOS.find((s) => s.clients === 1_000)!;
  const scenario = { ...scale, rounds: ROUNDS };
  const root = repositoryRoot();
  const out = mkdtempSync(join(tmpdir(), 'roundwire-bench-view-'));
  const scenarioPath = join(out, 'scenario.yaml');
  writeFileSync(scenarioPath, scaleScenarioText(scenario));
  const child = spawn(
    process.execPath,
    [
      join(root, 'bin', 'roundwire.js'),
      'run',
      scenarioPath,
      '--out',
      join(out, 'run'),
      '--view',
      '0',
    ],
    { cwd: root, stdio: ['ignore', 'ignore', 'pipe'] },
  );
  const exited = new Promise<number | null>((resolve) => child.on('exit', resolve));
  const ticksPerSecond = Number(execFileSync('getconf', ['CLK_TCK'], { encoding: 'utf8' }));
  /** the coordinator's CPU seconds when the progress line of a round was read */
  const cpuAt = new Map<number, number>();
  const timer = setTimeout(() => child.kill('SIGKILL'), RUN_SECONDS_MAX * 1000);
  const viewers: Viewer[] = [];
  let url: string | null = null;
  let lastProgressRound = 0;
  /** the progress line printed after every viewer was admitted: later rounds had viewers */
  let viewedFromRound: number | null = null;
  let admittedAll = false;
  let admissionFailure: unknown = null;
  /** viewers closed while the run went on (dropped for falling behind, or refused) */
  let dropped = 0;
  try {
    for await (const line of createInterface({ input: child.stderr })) {
      url ??= /^live view on (\S+)/.exec(line)?.[1] ?? null;
      const progress = PROGRESS_LINE.exec(line);
      if (progress === null) continue;
      lastProgressRound = Number(progress[1]);
      cpuAt.set(lastProgressRound, cpuSecondsOf(child.pid!, ticksPerSecond));
      if (admittedAll && viewedFromRound === null) viewedFromRound = lastProgressRound;
      if (lastProgressRound >= VIEWERS_FROM_ROUND && viewers.length === 0 && url !== null) {
        for (let i = 0; i < VIEWERS; i++) viewers.push(connectViewer(url));
        Promise.all(viewers.map((v) => v.admitted)).then(
          () => (admittedAll = true),
          (error: unknown) => (admissionFailure = error),
        );
      }
      // What follows the last round (the prediction, outcome.json) is not what is measured.
      if (lastProgressRound === ROUNDS) {
        dropped = viewers.filter((v) => v.closed).length;
        child.kill('SIGKILL');
      }
    }
    await exited;
    if (admissionFailure !== null) throw admissionFailure;
    if (lastProgressRound !== ROUNDS)
      throw new Error(`bench: the viewed run stopped after round ${lastProgressRound}`);
    if (viewedFromRound === null || viewedFromRound >= ROUNDS - 10)
      throw new Error(`bench: the viewers were admitted too late (round ${viewedFromRound})`);
    const walls = new Map<number, number>();
    for (const line of readFileSync(join(out, 'run', 'rounds.jsonl'), 'utf8').split('\n')) {
      if (line === '') continue;
      const record = roundRecordSchema.parse(JSON.parse(line));
      walls.set(record.round, record.wallSeconds);
    }
    const without = rate(walls, WARMUP_ROUNDS, VIEWERS_FROM_ROUND);
    const withViewers = rate(walls, viewedFromRound, ROUNDS);
    const ratio = withViewers / without;
    const cpuWithout =
      (VIEWERS_FROM_ROUND - WARMUP_ROUNDS) /
      (cpuAt.get(VIEWERS_FROM_ROUND)! - cpuAt.get(WARMUP_ROUNDS)!);
    const cpuWith = (ROUNDS - viewedFromRound) / (cpuAt.get(ROUNDS)! - cpuAt.get(viewedFromRound)!);
    process.stderr.write(
      `bench view: ${VIEWERS} viewers admitted by round ${viewedFromRound}; rounds ${WARMUP_ROUNDS}-${VIEWERS_FROM_ROUND} without, ${viewedFromRound}-${ROUNDS} with; events per viewer ${Math.min(...viewers.map((v) => v.events))} at least; dropped ${dropped}\n`,
    );
    return [
      {
        suite: 'view',
        case: `${VIEWERS} viewers, ${scenario.clients} clients: rounds per second with viewers`,
        shape: {
          problem: scenario.problem,
          clients: scenario.clients,
          d: scenario.features,
          method: scenario.method,
          rounds: ROUNDS,
          viewers: VIEWERS,
          workers: 2,
          clock: 'virtual',
        },
        figure: withViewers,
        unit: 'rounds/s',
        cpuFigure: cpuWith,
        reference: {
          against: 'the same run before any viewer',
          figure: without,
          ratio,
          cpuFigure: cpuWithout,
          cpuRatio: cpuWith / cpuWithout,
        },
        target: benchTarget('ratio', RATIO_MIN, 'x', ratio, undefined),
      },
    ];
  } finally {
    clearTimeout(timer);
    for (const viewer of viewers) viewer.socket.terminate();
    if (child.exitCode === null) child.kill('SIGKILL');
    rmSync(out, { recursive: true, force: true });
  }
}
