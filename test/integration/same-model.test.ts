// The distributed runtime and the in-process engine walk the very same rounds
// (src/engine/round-walk.ts) over different transports; with the virtual clock they must end on
// the same model bit for bit and write the same round and client records (DESIGN.md, Layout).
//
// The matrix is method x round policy x compression x participation x gradient (7*3*3*2*2
// cells). A covering sample runs here: every method meets every value of every other axis, and
// every pair of policy and compression, of compression and participation, and of participation
// and gradient occurs (checked below). Each cell is one `roundwire run` with 2 worker processes
// over 127.0.0.1 hosting 8 clients; the in-process engine then runs the scenario that run
// resolved (as its results folder holds it), and model.f64, rounds.jsonl and clients.jsonl are
// compared (wall seconds aside, and the encoded and wire byte layers, which only a network has).

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';
import { runInProcessInto } from '../../src/commands/run-report.js';
import { resultFiles } from '../../src/results/results-folder.js';
import type { ClientRoundRecord, RoundRecord } from '../../src/engine/round-record.js';
import {
  CliProcess,
  freshDir,
  overrideArgs,
  readJsonLines,
  repoRoot,
  survivorsAfter,
} from './cli-process.js';

const METHODS = ['gd', 'fedavg', 'fedprox', 'fednova', 'scaffold', 'fedlin', 'fedsplit'] as const;
const POLICIES = ['all', 'deadline', 'fastest-k'] as const;
const COMPRESSIONS = ['none', 'top-k with error feedback', 'rand-k'] as const;
const PARTICIPATIONS = [1, 0.5] as const;
const GRADIENTS = ['full', 'minibatch'] as const;

const CLIENTS = 8;
const ROUNDS = 4;
const WORKERS = 2;
/** fastest-k counts 3 updates: within the 4 participants of a round at participation 0.5 */
const FASTEST_K = 3;
/** quickstart plans 5 local steps per client */
const PLANNED_STEPS = 5;

interface Cell {
  method: (typeof METHODS)[number];
  policy: (typeof POLICIES)[number];
  compression: (typeof COMPRESSIONS)[number];
  participation: (typeof PARTICIPATIONS)[number];
  gradient: (typeof GRADIENTS)[number];
}

/**
 * Three cells per method, one per policy. Compression and participation follow (method +
 * policy) mod 3 and mod 2, so that across methods every policy meets every compression and
 * participation; the gradient changes with the last policy, so that each method sees both.
 */
function coveringCells(): Cell[] {
  return METHODS.flatMap((method, i) =>
    POLICIES.map((policy, j) => ({
      method,
      policy,
      compression: COMPRESSIONS[(i + j) % 3],
      participation: PARTICIPATIONS[(i + j) % 2],
      gradient: GRADIENTS[(i + (j === 2 ? 1 : 0)) % 2],
    })),
  );
}

/** Scenario field -> value (YAML), on top of scenarios/quickstart.yaml. */
function overridesOf(cell: Cell): Record<string, string> {
  const overrides: Record<string, string> = {
    'method.name': cell.method,
    'method.participation': String(cell.participation),
    'method.gradient': cell.gradient === 'full' ? 'full' : '{minibatch: 16}',
    'run.rounds': String(ROUNDS),
    'run.workers': String(WORKERS),
    'run.target': '0',
    // Persistent and per-round differences in speed, so that deadlines cut tau_i unevenly and
    // fastest-k drops different clients in different rounds.
    'timing.slowdown': '{kind: lognormal, sigma: 0.5}',
    'timing.jitter': '0.3',
  };
  if (cell.policy === 'deadline')
    overrides['timing.policy'] = '{kind: deadline, budgetSeconds: 0.004}';
  if (cell.policy === 'fastest-k')
    overrides['timing.policy'] = `{kind: fastest-k, k: ${FASTEST_K}}`;
  if (cell.compression === 'top-k with error feedback') {
    overrides['compression.uplink.default'] = '{kind: top-k, fraction: 0.25, errorFeedback: true}';
    overrides['compression.downlink.default'] = '{kind: top-k, fraction: 0.5, errorFeedback: true}';
  }
  if (cell.compression === 'rand-k') {
    overrides['compression.uplink.default'] =
      '{kind: rand-k, fraction: 0.3, unbiased: true, errorFeedback: false}';
    overrides['compression.downlink.default'] = '{kind: rand-k, fraction: 0.5}';
  }
  return overrides;
}

/** A record as JSON holds it, without the wall clock and the layers only a network counts. */
function comparable<T extends RoundRecord | ClientRoundRecord>(record: T): unknown {
  const copy = JSON.parse(JSON.stringify(record)) as Record<string, unknown> & {
    bytes: Record<string, unknown>;
  };
  delete copy.wallSeconds;
  delete copy.bytes.encoded;
  delete copy.bytes.wire;
  return copy;
}

function cellName(cell: Cell): string {
  return `${cell.method}, ${cell.policy}, ${cell.compression}, participation ${cell.participation}, ${cell.gradient} gradient`;
}

const CELLS = coveringCells();

describe('the covering sample of the matrix', () => {
  it('lets every method meet every value of every axis, and covers the pairs named above', () => {
    for (const method of METHODS) {
      const mine = CELLS.filter((c) => c.method === method);
      expect(new Set(mine.map((c) => c.policy)).size).toBe(POLICIES.length);
      expect(new Set(mine.map((c) => c.compression)).size).toBe(COMPRESSIONS.length);
      expect(new Set(mine.map((c) => c.participation)).size).toBe(PARTICIPATIONS.length);
      expect(new Set(mine.map((c) => c.gradient)).size).toBe(GRADIENTS.length);
    }
    const pairs = (a: keyof Cell, b: keyof Cell) =>
      new Set(CELLS.map((c) => `${c[a]}|${c[b]}`)).size;
    expect(pairs('policy', 'compression')).toBe(POLICIES.length * COMPRESSIONS.length);
    expect(pairs('compression', 'participation')).toBe(COMPRESSIONS.length * PARTICIPATIONS.length);
    expect(pairs('participation', 'gradient')).toBe(PARTICIPATIONS.length * GRADIENTS.length);
    expect(pairs('policy', 'participation')).toBe(POLICIES.length * PARTICIPATIONS.length);
  });
});

describe(`roundwire run (${WORKERS} workers, ${CLIENTS} clients, ${ROUNDS} rounds) equals the in-process engine bit for bit`, () => {
  for (const cell of CELLS) {
    it(
      cellName(cell),
      async () => {
        const out = freshDir(`same-${cell.method}`);
        const run = new CliProcess([
          'run',
          join(repoRoot, 'scenarios/quickstart.yaml'),
          '--out',
          out,
          ...overrideArgs(overridesOf(cell)),
        ]);
        try {
          const exit = await run.exit(50_000);
          expect(exit.code, run.stderr).toBe(0);
          expect(run.workerPids()).toHaveLength(WORKERS);
          expect(await survivorsAfter(run.workerPids(), 5_000)).toEqual([]);
        } finally {
          run.kill();
        }

        const inProcess = freshDir(`same-${cell.method}-in-process`);
        runInProcessInto(loadScenarioFile(join(out, resultFiles.resolvedScenario)), inProcess);
        expect(
          readFileSync(join(out, resultFiles.modelBinary)).equals(
            readFileSync(join(inProcess, resultFiles.modelBinary)),
          ),
        ).toBe(true);
        const rounds = readJsonLines<RoundRecord>(join(out, resultFiles.rounds));
        expect(rounds.map(comparable)).toEqual(
          readJsonLines<RoundRecord>(join(inProcess, resultFiles.rounds)).map(comparable),
        );
        expect(
          readJsonLines<ClientRoundRecord>(join(out, resultFiles.clients)).map(comparable),
        ).toEqual(
          readJsonLines<ClientRoundRecord>(join(inProcess, resultFiles.clients)).map(comparable),
        );

        // The cell exercised what it names.
        expect(rounds.map((r) => r.round)).toEqual(Array.from({ length: ROUNDS + 1 }, (_, r) => r));
        const participants = Math.round(cell.participation * CLIENTS);
        for (const r of rounds.slice(1)) {
          expect(Object.keys(r.localSteps)).toHaveLength(participants);
          if (cell.policy === 'fastest-k')
            expect(r.dropped.length).toBeGreaterThanOrEqual(participants - FASTEST_K);
          else expect(r.dropped).toEqual([]);
        }
        if (cell.policy === 'deadline')
          expect(
            rounds
              .slice(1)
              .some((r) => Object.values(r.localSteps).some((s) => s !== PLANNED_STEPS)),
          ).toBe(true);
      },
      60_000,
    );
  }
});
