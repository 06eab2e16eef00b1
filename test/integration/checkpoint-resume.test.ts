// kill -9 of a running `roundwire run` (the coordinator with its local workers, or the
// in-process engine) at a seeded random round, then `roundwire resume <folder>`: the final model
// and every record (wall-clock seconds aside) equal an uninterrupted run's bit for bit (virtual
// clock). So does kill -9 of a `roundwire coordinator` whose workers survive: they wait for it
// and rejoin `roundwire resume <folder> --listen` at the same address, which sends them their
// clients' states. SIGINT on `run --in-process` leaves a folder that resumes to the same end. A checkpoint
// of another scenario, a cut-short one and one of another format version are each refused with
// exit code 2 and one line naming the reason.

import { copyFileSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { createServer } from 'node:net';
import { Rng } from '../../src/base/rng.js';
import {
  CliProcess,
  freshDir,
  isAlive,
  readJsonLines,
  repoRoot,
  survivorsAfter,
  writeKeyFile,
} from './cli-process.js';

const ROUNDS = 160;
const CHECKPOINT_EVERY = 10;
/** The kill comes after a random round in [KILL_ROUND_MIN, KILL_ROUND_MIN + KILL_ROUND_SPAN). */
const KILL_ROUND_MIN = 25;
const KILL_ROUND_SPAN = 100;
/** The run's seed for the kill rounds; printed, so that a failure can be replayed. */
const KILL_SEED = 20240611;

function scenarioArgs(): string[] {
  return [
    join(repoRoot, 'scenarios/quickstart.yaml'),
    '--tweak',
    `run.rounds:${ROUNDS}`,
    '--tweak',
    'run.target:0',
    '--tweak',
    `run.checkpointEveryRounds:${CHECKPOINT_EVERY}`,
    // Top-k with error feedback on both channels and partial participation: every kind of
    // state a checkpoint must carry.
    '--tweak',
    'compression.uplink.default:{kind: top-k, fraction: 0.25, errorFeedback: true}',
    '--tweak',
    'compression.downlink.default:{kind: top-k, fraction: 0.5, errorFeedback: true}',
    '--tweak',
    'method.participation:0.5',
  ];
}

/**
 * A results file's lines without the wall clock; across runtimes also without the byte layers
 * only a network counts (encoded, wire), as test/integration/same-model.test.ts compares them.
 */
function comparableLines(dir: string, file: string, acrossRuntimes: boolean): unknown[] {
  return readJsonLines<Record<string, unknown>>(join(dir, file)).map((line) => {
    const { wallSeconds: _wall, ...rest } = line;
    if (!acrossRuntimes) return rest;
    const { encoded: _encoded, wire: _wire, ...bytes } = rest.bytes as Record<string, unknown>;
    return { ...rest, bytes };
  });
}

function expectSameRun(dir: string, reference: string, acrossRuntimes = false): void {
  expect(
    readFileSync(join(dir, 'model.f64')).equals(readFileSync(join(reference, 'model.f64'))),
  ).toBe(true);
  for (const file of ['rounds.jsonl', 'clients.jsonl'])
    expect(comparableLines(dir, file, acrossRuntimes), file).toEqual(
      comparableLines(reference, file, acrossRuntimes),
    );
}

async function completed(args: string[], timeoutMs: number): Promise<CliProcess> {
  const cli = new CliProcess(args);
  try {
    const exit = await cli.exit(timeoutMs);
    expect(exit.code, cli.stderr).toBe(0);
  } finally {
    cli.kill();
  }
  return cli;
}

/** Resolves once the progress lines (printed every few rounds off a terminal) reach `round`. */
async function progressPast(cli: CliProcess, round: number, timeoutMs: number): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  const reached = () =>
    [...cli.stderr.matchAll(/round (\d+)\//g)].some((m) => Number(m[1]) >= round);
  while (!reached()) {
    if (Date.now() > deadline)
      throw new Error(`no progress past round ${round} within ${timeoutMs} ms:\n${cli.stderr}`);
    await new Promise((r) => setTimeout(r, 20));
  }
}

/** Starts `args`, kills it with SIGKILL once its progress passes `round`; returns its worker pids. */
async function killedAfter(args: string[], round: number): Promise<number[]> {
  const cli = new CliProcess(args);
  try {
    await progressPast(cli, round, 60_000);
    cli.child.kill('SIGKILL');
    await cli.exit(10_000);
    return cli.workerPids();
  } finally {
    cli.kill();
  }
}

const rng = Rng.derive(KILL_SEED, 'kill-round');
const killRounds = [
  KILL_ROUND_MIN + rng.nextInt(KILL_ROUND_SPAN),
  KILL_ROUND_MIN + rng.nextInt(KILL_ROUND_SPAN),
  KILL_ROUND_MIN + rng.nextInt(KILL_ROUND_SPAN),
];
console.log(
  `kill rounds (seed ${KILL_SEED}): distributed ${killRounds[0]}, in-process ${killRounds[1]}, coordinator ${killRounds[2]}`,
);

async function freePort(): Promise<number> {
  const server = createServer();
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  const port = (server.address() as { port: number }).port;
  await new Promise<void>((resolve) => server.close(() => resolve()));
  return port;
}

let uninterruptedRun: Promise<string> | undefined;

/**
 * The uninterrupted run with local workers, which both kill -9 tests of a distributed run end
 * on: run once, on first use, and shared (it is the same command both times).
 */
function distributedReference(): Promise<string> {
  uninterruptedRun ??= (async () => {
    const reference = freshDir('resume-ref');
    await completed(['run', ...scenarioArgs(), '--out', reference], 90_000);
    return reference;
  })();
  return uninterruptedRun;
}

describe('kill -9, then roundwire resume', () => {
  it(`run with local workers, killed after round ${killRounds[0]}, resumes to the uninterrupted run bit for bit`, async () => {
    const reference = await distributedReference();
    const dir = freshDir('resume-killed');
    const workers = await killedAfter(['run', ...scenarioArgs(), '--out', dir], killRounds[0]);
    expect(workers).toHaveLength(2);
    const resumed = await completed(['resume', dir], 90_000);
    expect(resumed.stderr).toMatch(/resuming .* after round \d+/);
    expectSameRun(dir, reference);
    // The killed run's workers waited for their coordinator a bounded time, then gave up.
    expect(await survivorsAfter(workers, 20_000)).toEqual([]);
    for (const pid of workers) if (isAlive(pid)) process.kill(pid, 'SIGKILL');
  }, 240_000);

  it(`run --in-process, killed after round ${killRounds[1]}, resumes in either runtime to the same end`, async () => {
    const reference = freshDir('resume-ref-ip');
    await completed(['run', ...scenarioArgs(), '--in-process', '--out', reference], 60_000);
    const dir = freshDir('resume-killed-ip');
    await killedAfter(['run', ...scenarioArgs(), '--in-process', '--out', dir], killRounds[1]);
    const copy = freshDir('resume-killed-ip-copy');
    for (const file of [
      'checkpoint.bin',
      'resolved-scenario.yaml',
      'rounds.jsonl',
      'clients.jsonl',
    ])
      copyFileSync(join(dir, file), join(copy, file));
    await completed(['resume', dir, '--in-process'], 60_000);
    expectSameRun(dir, reference);
    // The same checkpoint resumed by the distributed runtime ends on the same run.
    await completed(['resume', copy], 90_000);
    expectSameRun(copy, reference, true);
  }, 300_000);
});

describe('kill -9 of a coordinator whose workers survive', () => {
  it(`the workers wait, rejoin the resumed coordinator and the run ends as the uninterrupted one`, async () => {
    const reference = await distributedReference();
    const dir = freshDir('resume-coord');
    const key = writeKeyFile(freshDir('resume-coord-key'), 'a-shared-key-of-the-test-cluster');
    const port = await freePort();
    const listen = ['--listen', `127.0.0.1:${port}`, '--key-file', key, '--workers-min', '2'];
    const [scenario, ...tweaks] = scenarioArgs();
    const coordinator = new CliProcess([
      'coordinator',
      scenario,
      ...listen,
      ...tweaks,
      '--out',
      dir,
    ]);
    const workers = [1, 2].map(
      (i) =>
        new CliProcess([
          'worker',
          `ws://127.0.0.1:${port}`,
          '--key-file',
          key,
          '--capacity',
          '4',
          '--name',
          `survivor-${i}`,
        ]),
    );
    try {
      await progressPast(coordinator, killRounds[2], 60_000);
      coordinator.child.kill('SIGKILL');
      await coordinator.exit(10_000);
      const resumed = new CliProcess(['resume', dir, ...listen]);
      try {
        const exit = await resumed.exit(90_000);
        expect(exit.code, resumed.stderr).toBe(0);
      } finally {
        resumed.kill();
      }
      for (const worker of workers) {
        const exit = await worker.exit(30_000);
        expect(exit.code, worker.stderr).toBe(0);
        expect(worker.stderr).toMatch(/joining afresh/);
      }
      expectSameRun(dir, reference);
    } finally {
      coordinator.kill();
      for (const worker of workers) worker.kill();
    }
  }, 240_000);
});

describe('SIGINT on run --in-process', () => {
  it('exits 130 with the resume line, and the folder resumes to the uninterrupted run', async () => {
    // Long enough that the signal comes mid-run; evaluated every 7th round, so that a stopped
    // round's record must not carry an evaluation an unstopped run would not have made.
    const args = [...scenarioArgs(), '--tweak', 'run.rounds:4000', '--tweak', 'run.evalEvery:7'];
    const reference = freshDir('resume-sigint-ref');
    await completed(['run', ...args, '--in-process', '--out', reference], 90_000);
    const dir = freshDir('resume-sigint');
    const cli = new CliProcess(['run', ...args, '--in-process', '--out', dir]);
    try {
      await progressPast(cli, 300, 60_000);
      cli.child.kill('SIGINT');
      const exit = await cli.exit(30_000);
      expect(exit.code, cli.stderr).toBe(130);
      const line = cli.stderr.match(
        /checkpoint after round (\d+) in (\S+); go on with: roundwire resume (\S+)/,
      );
      expect(line, cli.stderr).not.toBeNull();
      expect(line![3]).toBe(dir);
      expect(Number(line![1])).toBeLessThan(4000);
    } finally {
      cli.kill();
    }
    await completed(['resume', dir, '--in-process'], 90_000);
    expectSameRun(dir, reference);
  }, 240_000);
});

describe('a checkpoint that cannot be resumed', () => {
  it('of another scenario, cut short or of another version: exit 2 and one line naming the reason', async () => {
    const dir = freshDir('resume-bad');
    await killedAfter(['run', ...scenarioArgs(), '--in-process', '--out', dir], 40);
    const other = freshDir('resume-bad-other');
    await killedAfter(
      ['run', ...scenarioArgs(), '--tweak', 'seed:8', '--in-process', '--out', other],
      40,
    );
    const checkpoint = readFileSync(join(dir, 'checkpoint.bin'));
    const cases: [string, () => void, RegExp][] = [
      [
        'another scenario',
        () => copyFileSync(join(other, 'checkpoint.bin'), join(dir, 'checkpoint.bin')),
        /the checkpoint of another scenario/,
      ],
      [
        'cut short',
        () =>
          writeFileSync(
            join(dir, 'checkpoint.bin'),
            checkpoint.subarray(0, checkpoint.length - 100),
          ),
        /damaged checkpoint \(cut short/,
      ],
      [
        'another version',
        () => {
          const copy = Buffer.from(checkpoint);
          copy.writeUInt32LE(99, 8);
          writeFileSync(join(dir, 'checkpoint.bin'), copy);
        },
        /checkpoint format version 99; this roundwire reads version 1/,
      ],
    ];
    for (const [name, damage, reason] of cases) {
      damage();
      const cli = new CliProcess(['resume', dir, '--in-process']);
      const exit = await cli.exit(30_000);
      expect(exit.code, name).toBe(2);
      expect(cli.stderr.trim().split('\n'), name).toHaveLength(1);
      expect(cli.stderr, name).toMatch(reason);
    }
  }, 120_000);
});
