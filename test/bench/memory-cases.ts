// What `npm run bench` measures of memory: the coordinator's resident set (RSS) over a long run,
// which must not grow with the rounds (records stream to disk; only what the live views need
// stays). Each case runs `roundwire run` (the coordinator, with real local worker processes, on
// the virtual clock) as a child process once, reads its progress lines, and samples VmRSS from
// /proc/PID/status (proc(5)) when the run passes 10% of its rounds and when it reaches its last
// round. The figure is the RSS at the end, the reference the RSS at 10%, and the ratio end / 10%
// (the target is at most 1.2).

import { spawn } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createInterface } from 'node:readline';
import type { BenchResult } from './bench-report.js';
import { repositoryRoot } from './repository-root.js';

export interface MemoryCase {
  name: string;
  rounds: number;
  clients: number;
  /** scenario fields changed from the bundled quickstart, as --tweak texts */
  tweaks: string[];
}

/** A long run of a small model, and a run with many clients (its model small as well). */
export const MEMORY_CASES: MemoryCase[] = [
  {
    name: 'coordinator RSS, long run',
    rounds: 20_000,
    clients: 8,
    // The smallest model: a round's cost is then the messages and the evaluation alone.
    tweaks: [
      'method.name:fedavg',
      'method.localSteps:1',
      'data.features:2',
      'data.samplesPerClient:10',
    ],
  },
  {
    name: 'coordinator RSS, many clients',
    rounds: 300,
    clients: 1_000,
    tweaks: ['method.name:fedavg', 'data.features:5', 'data.samplesPerClient:20'],
  },
];

/** Longest a case may run before it is stopped (a bench, not a test: generous). */
const CASE_SECONDS_MAX = 900;

const KIB_BYTES = 1024;
const MIB_BYTES = 1024 * 1024;

/** VmRSS of a process in bytes (proc(5): "VmRSS: <n> kB"). */
function residentBytes(pid: number): number {
  const status = readFileSync(`/proc/${pid}/status`, 'utf8');
  const match = /^VmRSS:\s+(\d+)\s+kB$/m.exec(status);
  if (match === null) throw new Error(`bench: no VmRSS in /proc/${pid}/status`);
  return Number(match[1]) * KIB_BYTES;
}

async function measureCase(root: string, c: MemoryCase): Promise<BenchResult> {
  const out = mkdtempSync(join(tmpdir(), 'roundwire-bench-memory-'));
  const args = [
    join(root, 'bin', 'roundwire.js'),
    'run',
    join(root, 'scenarios', 'quickstart.yaml'),
    '--out',
    out,
    ...[
      `run.rounds:${c.rounds}`,
      'run.target:0',
      'run.workers:2',
      `clients.count:${c.clients}`,
      'timing.clock:virtual',
      ...c.tweaks,
    ].flatMap((t) => ['--tweak', t]),
  ];
  const child = spawn(process.execPath, args, { cwd: root, stdio: ['ignore', 'ignore', 'pipe'] });
  const timer = setTimeout(() => child.kill('SIGKILL'), CASE_SECONDS_MAX * 1000);
  let atTenthBytes: number | null = null;
  let atEndBytes: number | null = null;
  const tenth = Math.ceil(c.rounds / 10);
  const stderr: string[] = [];
  try {
    const lines = createInterface({ input: child.stderr });
    const exited = new Promise<number | null>((resolve) => child.on('exit', resolve));
    for await (const line of lines) {
      stderr.push(line);
      if (stderr.length > 20) stderr.shift();
      const round = /^round (\d+)\//.exec(line);
      if (round === null) continue;
      const r = Number(round[1]);
      if (atTenthBytes === null && r >= tenth) atTenthBytes = residentBytes(child.pid!);
      if (r === c.rounds) atEndBytes = residentBytes(child.pid!);
    }
    const code = await exited;
    if (code !== 0 || atTenthBytes === null || atEndBytes === null)
      throw new Error(`bench: ${c.name} ended with code ${code}:\n${stderr.join('\n')}`);
  } finally {
    clearTimeout(timer);
    child.kill('SIGKILL');
    rmSync(out, { recursive: true, force: true });
  }
  const figure = atEndBytes / MIB_BYTES;
  const reference = atTenthBytes / MIB_BYTES;
  return {
    suite: 'memory',
    case: c.name,
    shape: { rounds: c.rounds, clients: c.clients, workers: 2, clock: 'virtual' },
    figure,
    unit: 'MiB',
    better: 'lower',
    reference: {
      against: 'RSS at 10% of the rounds',
      figure: reference,
      ratio: figure / reference,
    },
  };
}

/** Runs every memory case once, one after the other. */
export async function runMemoryBench(
  cases: readonly MemoryCase[] = MEMORY_CASES,
): Promise<BenchResult[]> {
  const root = repositoryRoot();
  const results: BenchResult[] = [];
  for (const c of cases) results.push(await measureCase(root, c));
  return results;
}
