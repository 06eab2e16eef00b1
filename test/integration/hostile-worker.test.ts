// An authenticated worker is trusted with its own clients and nothing more. Against a real
// coordinator process on the quickstart scenario (8 clients, FedLin: a gradient exchange, then
// local work), with an honest `roundwire worker` hosting four clients and a scripted peer that
// holds the key hosting the other four:
// - one finite upload of 1e300 from the peer stops the run as "diverged" in that very round,
//   and none of it is folded in: the model is the clean run's after the round before (1e300 is
//   finite, and far past the explosion bound of src/engine/explosion-bound.ts);
// - an `error` message from the peer loses the peer's clients only: the run completes with the
//   honest worker's, and outcome.json lists the peer as lost; with no other worker, the run
//   ends "workers-lost" (the rule for a worker that went away);
// - a peer that holds back its ready (its clients' data built) holds back the first round, and
//   the wait counts as seconds.join, not as the rounds' wall seconds.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import WebSocket from 'ws';
import { afterEach, describe, expect, it } from 'vitest';
import {
  decodeMessage,
  encodeMessage,
  encodeRoundFrame,
  FrameElements,
  proveKey,
  PROTOCOL_VERSION,
  toWire,
  type ControlMessage,
  type DownEntry,
  type DownsFrame,
  type ErrorMessage,
  type FieldDims,
  type UpEntry,
  type WireFields,
} from '../../src/protocol/index.js';
import { downFieldDimsFor } from '../../src/engine/down-field-dims.js';
import { ClientRuntime } from '../../src/engine/client-runtime.js';
import type { RoundRecord } from '../../src/engine/round-record.js';
import type { WirePlan } from '../../src/engine/run-plan.js';
import { runInProcess } from '../../src/engine/in-process-engine.js';
import { clientObjective } from '../../src/data/problem-instance.js';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';
import { validateScenario } from '../../src/scenario/validate-scenario.js';
import { resultFiles } from '../../src/results/results-folder.js';
import {
  CliProcess,
  freshDir,
  quickstartCoordinatorArgs,
  readJsonLines,
  repoRoot,
  writeKeyFile,
} from './cli-process.js';
import { RecordList } from '../support/record-list.js';
import { honestUpEntry, readDownsFrame } from './hostile-connections.js';

const KEY = 'a-key-for-the-hostile-worker-test';
const PEER_NAME = 'scripted';
const READ_LIMIT_BYTES = 64 * 1024 * 1024;
/** How long the peer holds back its ready: long beside a two-round quickstart run (well under a second). */
const LATE_READY_SECONDS = 2;

type Plain = Record<string, unknown>;

/** One entry of a downs frame as the peer sees it. */
interface PeerDown {
  round: number;
  exchange: string;
  clientId: number;
}

/** What the peer sends for one client's down: given the honest up (computed on demand), an up, an error, or nothing. */
type PeerScript = (down: PeerDown, honestUp: () => UpEntry) => UpEntry | ErrorMessage | null;

interface Peer {
  clientIds: () => number[];
  /** performance.now() when the welcome came, and when the first downs frame came (null: none yet) */
  times: () => { welcomedMs: number | null; firstDownsMs: number | null };
  /** resolves when the coordinator says done or closes the connection */
  finished: Promise<void>;
}

/**
 * Joins `url` with the key as a worker named PEER_NAME, says ready `readyDelayMs` after its
 * welcome, and answers every downs entry by `script`.
 */
function joinAsPeer(url: string, capacity: number, script: PeerScript, readyDelayMs = 0): Peer {
  let welcomedMs: number | null = null;
  let firstDownsMs: number | null = null;
  let runtimes = new Map<number, ClientRuntime>();
  let ownIds: number[] = [];
  let downFieldDims: FieldDims = {};
  const send = (ws: WebSocket, message: ControlMessage) =>
    ws.send(encodeMessage(message), { binary: true });
  const honestUp = (frame: DownsFrame, entry: DownEntry): UpEntry =>
    honestUpEntry(runtimes, frame, entry);
  const finished = new Promise<void>((resolve, reject) => {
    const ws = new WebSocket(url, { perMessageDeflate: false });
    ws.once('error', reject);
    ws.once('close', () => resolve());
    ws.on('message', (data: Buffer) => {
      const raw = decodeMessage(new Uint8Array(data), READ_LIMIT_BYTES);
      if (raw instanceof FrameElements) {
        firstDownsMs ??= performance.now();
        const frame = readDownsFrame(raw, downFieldDims, Number.MAX_SAFE_INTEGER);
        const ups: UpEntry[] = [];
        for (const entry of frame.entries) {
          const down = { round: frame.round, exchange: frame.exchange, clientId: entry.clientId };
          const reply = script(down, () => honestUp(frame, entry));
          if (reply === null) continue;
          if ('type' in reply) {
            send(ws, reply);
            return;
          }
          ups.push(reply);
        }
        if (ups.length > 0)
          ws.send(
            encodeRoundFrame(
              { type: 'ups', round: frame.round, exchange: frame.exchange, entries: ups },
              downFieldDims,
            ),
            { binary: true },
          );
        return;
      }
      const m = raw as Plain;
      switch (m.type) {
        case 'challenge':
          send(ws, {
            type: 'hello',
            protocolVersion: PROTOCOL_VERSION,
            workerName: PEER_NAME,
            capacity,
            proof: proveKey(KEY, m.nonce as Uint8Array),
          });
          return;
        case 'welcome': {
          const wire = m.plan as unknown as WirePlan;
          const plan: WirePlan = { ...wire, scenario: validateScenario(wire.scenario) };
          ownIds = m.assignments as number[];
          downFieldDims = downFieldDimsFor(plan);
          runtimes = new Map(
            ownIds.map((id) => [
              id,
              new ClientRuntime(plan, id, clientObjective(plan.scenario, id)),
            ]),
          );
          welcomedMs = performance.now();
          setTimeout(() => send(ws, { type: 'ready' }), readyDelayMs);
          return;
        }
        case 'done':
          ws.close();
          return;
        default:
          return;
      }
    });
  });
  return { clientIds: () => ownIds, times: () => ({ welcomedMs, firstDownsMs }), finished };
}

interface Outcome {
  stopReason: string;
  distributed: {
    workers: { workerName: string; clientIds: number[] }[];
    lostWorkers: { workerName: string; clientIds: number[]; round: number; reason: string }[];
  };
}

const started: CliProcess[] = [];
afterEach(() => {
  for (const p of started.splice(0)) p.kill();
});

/** A coordinator for `workersMin` workers on the quickstart with `tweaks`; resolves to its URL. */
async function startCoordinator(
  out: string,
  workersMin: number,
  tweaks: readonly string[],
): Promise<{ coordinator: CliProcess; url: string; keyFile: string }> {
  const keyFile = writeKeyFile(out, KEY);
  const coordinator = new CliProcess(
    quickstartCoordinatorArgs(
      join(out, 'results'),
      keyFile,
      workersMin,
      tweaks.flatMap((t) => ['--tweak', t]),
    ),
  );
  started.push(coordinator);
  const url = (await coordinator.waitForStderr(/listening on (ws:\/\/\S+)/, 30_000))[1];
  return { coordinator, url, keyFile };
}

function honestWorker(url: string, keyFile: string): CliProcess {
  const worker = new CliProcess(['worker', url, '--key-file', keyFile, '--capacity', '4']);
  started.push(worker);
  return worker;
}

const readOutcome = (out: string) =>
  JSON.parse(readFileSync(join(out, 'results', resultFiles.outcome), 'utf8')) as Outcome;

describe('a hostile authenticated worker', () => {
  it('sends one finite upload of 1e300: the run stops as diverged in that round, unspoiled', async () => {
    const tweaks = ['run.rounds:5', 'run.target:0'];
    const out = freshDir('hostile-worker-1e300');
    const { coordinator, url, keyFile } = await startCoordinator(out, 2, tweaks);
    const worker = honestWorker(url, keyFile);
    let poisoned: number | null = null;
    const peer = joinAsPeer(url, 4, (down, honestUp) => {
      const up = honestUp();
      // Round 2's first exchange, one client: every value 1e300 (finite: IEEE 754's largest
      // double is about 1.8e308), in the field's own shape.
      if (down.round !== 2 || poisoned !== null) return up;
      poisoned = up.clientId;
      const fields: WireFields = {};
      for (const [name, wv] of Object.entries(up.fields))
        fields[name] = toWire({
          dim: wv.dim,
          indices: null,
          values: new Float64Array(wv.dim).fill(1e300),
        });
      return { ...up, fields };
    });
    await peer.finished;
    expect((await coordinator.exit(40_000)).code, coordinator.stderr).toBe(0);
    expect((await worker.exit(20_000)).code, worker.stderr).toBe(0);
    expect(poisoned).not.toBeNull();

    expect(readOutcome(out).stopReason).toBe('diverged');
    const rounds = readJsonLines<RoundRecord>(join(out, 'results', resultFiles.rounds));
    expect(rounds.map((r) => r.round)).toEqual([0, 1, 2]);
    // Nothing of round 2 was folded in: the model and f - f* are the clean run's after round 1.
    const cleanRecords = new RecordList();
    const clean = runInProcess(
      loadScenarioFile(join(repoRoot, 'scenarios/quickstart.yaml'), [...tweaks, 'run.rounds:1']),
      { openRecords: () => cleanRecords },
    );
    const expected = Buffer.alloc(clean.finalModel.length * 8);
    clean.finalModel.forEach((v, j) => expected.writeDoubleLE(v, j * 8));
    expect(readFileSync(join(out, 'results', resultFiles.modelBinary)).equals(expected)).toBe(true);
    expect(rounds[2].suboptimality).toBe(cleanRecords.rounds[1].suboptimality);
  }, 60_000);

  it("sends an error: only its own clients are lost, and the run completes with the others'", async () => {
    const out = freshDir('hostile-worker-error');
    const { coordinator, url, keyFile } = await startCoordinator(out, 2, [
      'run.rounds:4',
      'run.target:0',
    ]);
    const worker = honestWorker(url, keyFile);
    const peer = joinAsPeer(url, 4, (down, honestUp) =>
      down.round === 2
        ? { type: 'error', code: 'E_TYPE', message: 'a claim about nothing but this worker' }
        : honestUp(),
    );
    await peer.finished;
    expect((await coordinator.exit(40_000)).code, coordinator.stderr).toBe(0);
    expect((await worker.exit(20_000)).code, worker.stderr).toBe(0);

    const outcome = readOutcome(out);
    expect(outcome.stopReason).toBe('rounds-complete');
    const peerIds = peer.clientIds();
    expect(peerIds).toHaveLength(4);
    expect(outcome.distributed.lostWorkers).toEqual([
      { workerName: PEER_NAME, clientIds: peerIds, round: 2, reason: 'reported E_TYPE' },
    ]);
    const honestIds = [0, 1, 2, 3, 4, 5, 6, 7].filter((id) => !peerIds.includes(id));
    const rounds = readJsonLines<RoundRecord>(join(out, 'results', resultFiles.rounds));
    expect(rounds.map((r) => r.round)).toEqual([0, 1, 2, 3, 4]);
    // Round 2 drops the peer's clients; rounds 3 and 4 run the honest worker's alone.
    expect(rounds[2].dropped).toEqual(peerIds);
    for (const r of rounds.slice(3)) {
      expect(Object.keys(r.localSteps).map(Number)).toEqual(honestIds);
      expect(Number.isFinite(r.suboptimality)).toBe(true);
    }
  }, 60_000);

  it('sends an error as the only worker: the run ends as workers-lost, results written', async () => {
    const out = freshDir('hostile-worker-alone');
    const { coordinator, url } = await startCoordinator(out, 1, ['run.rounds:4', 'run.target:0']);
    const peer = joinAsPeer(url, 8, (down, honestUp) =>
      down.round === 2 ? { type: 'error', code: 'E_TYPE', message: 'giving up' } : honestUp(),
    );
    await peer.finished;
    expect((await coordinator.exit(40_000)).code, coordinator.stderr).toBe(0);
    const outcome = readOutcome(out);
    expect(outcome.stopReason).toBe('workers-lost');
    expect(outcome.distributed.lostWorkers.map((w) => [w.workerName, w.round])).toEqual([
      [PEER_NAME, 2],
    ]);
    const rounds = readJsonLines<RoundRecord>(join(out, 'results', resultFiles.rounds));
    expect(rounds.map((r) => r.round)).toEqual([0, 1, 2]);
  }, 60_000);

  it('holds back its ready: the first round waits for it, and the wait is join time', async () => {
    const out = freshDir('hostile-worker-late-ready');
    const { coordinator, url, keyFile } = await startCoordinator(out, 2, [
      'run.rounds:2',
      'run.target:0',
    ]);
    const worker = honestWorker(url, keyFile);
    const peer = joinAsPeer(url, 4, (_down, honestUp) => honestUp(), LATE_READY_SECONDS * 1000);
    await peer.finished;
    expect((await coordinator.exit(40_000)).code, coordinator.stderr).toBe(0);
    expect((await worker.exit(20_000)).code, worker.stderr).toBe(0);

    const { welcomedMs, firstDownsMs } = peer.times();
    expect(welcomedMs).not.toBeNull();
    expect(firstDownsMs).not.toBeNull();
    expect(firstDownsMs! - welcomedMs!).toBeGreaterThanOrEqual(LATE_READY_SECONDS * 1000);
    const outcome = JSON.parse(readFileSync(join(out, 'results', resultFiles.outcome), 'utf8')) as {
      stopReason: string;
      seconds: { join: number; wall: number };
    };
    expect(outcome.stopReason).toBe('rounds-complete');
    expect(outcome.seconds.join).toBeGreaterThanOrEqual(LATE_READY_SECONDS);
    const rounds = readJsonLines<RoundRecord>(join(out, 'results', resultFiles.rounds));
    expect(rounds.map((r) => r.round)).toEqual([0, 1, 2]);
    expect(rounds[0].wallSeconds).toBeLessThan(LATE_READY_SECONDS);
  }, 60_000);
});
