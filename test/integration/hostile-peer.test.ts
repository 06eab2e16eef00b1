// Every network input is validated before use (DESIGN.md, Messages). Against a real
// coordinator process: a worker proving a wrong key is refused (E_AUTH) before it learns
// anything of the plan; a worker that authenticates but also sends malformed frames (random
// bytes, a wrong round, another worker's client id, a client twice in one frame, a smaller
// dimension (a larger one is E_SIZE, past the plan's largest), NaN values, an oversized frame) gets an error with the matching code for each, they are counted, and the run's final
// model is still exactly the clean in-process run's.

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
  type FieldDims,
  type UpEntry,
  type UpsFrame,
} from '../../src/protocol/index.js';
import { downFieldDimsFor } from '../../src/engine/down-field-dims.js';
import { ClientRuntime } from '../../src/engine/client-runtime.js';
import type { WirePlan } from '../../src/engine/run-plan.js';
import { runInProcess } from '../../src/engine/in-process-engine.js';
import { clientObjective } from '../../src/data/problem-instance.js';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';
import { validateScenario } from '../../src/scenario/validate-scenario.js';
import {
  CliProcess,
  freshDir,
  repoRoot,
  writeKeyFile,
  quickstartCoordinatorArgs,
} from './cli-process.js';
import { honestUpEntry, readDownsFrame } from './hostile-connections.js';

const KEY = 'a-key-for-the-hostile-peer-test';
const TWEAKS = ['run.rounds:3', 'run.target:0'];
const READ_LIMIT_BYTES = 64 * 1024 * 1024;

type Plain = Record<string, unknown>;

function open(
  url: string,
  onMessage: (message: Plain | FrameElements, ws: WebSocket) => void,
): Promise<WebSocket> {
  return new Promise((resolve, reject) => {
    const ws = new WebSocket(url, { perMessageDeflate: false });
    ws.on('message', (data: Buffer) =>
      onMessage(decodeMessage(new Uint8Array(data), READ_LIMIT_BYTES) as Plain | FrameElements, ws),
    );
    ws.once('open', () => resolve(ws));
    ws.once('error', reject);
  });
}

function sendRaw(ws: WebSocket, bytes: Uint8Array): void {
  ws.send(bytes, { binary: true });
}

function send(ws: WebSocket, message: ControlMessage): void {
  sendRaw(ws, encodeMessage(message));
}

const started: CliProcess[] = [];
afterEach(() => {
  for (const p of started.splice(0)) p.kill();
});

describe('hostile peers', () => {
  it('a wrong key is refused before the plan; malformed frames get coded errors and change nothing', async () => {
    const out = freshDir('hostile');
    const keyFile = writeKeyFile(out, KEY);
    const coordinator = new CliProcess(
      quickstartCoordinatorArgs(
        out,
        keyFile,
        2,
        TWEAKS.flatMap((o) => ['--tweak', o]),
      ),
    );
    started.push(coordinator);
    const url = (await coordinator.waitForStderr(/listening on (ws:\/\/\S+)/, 30_000))[1];

    // 1. Wrong key: a challenge, then an error E_AUTH and a closed socket; never a welcome.
    const intruderSaw: Plain[] = [];
    const intruder = await open(url, (raw, ws) => {
      const m = raw as Plain;
      intruderSaw.push(m);
      if (m.type === 'challenge')
        send(ws, {
          type: 'hello',
          protocolVersion: PROTOCOL_VERSION,
          workerName: 'intruder',
          capacity: 8,
          proof: proveKey('not-the-shared-key', m.nonce as Uint8Array),
        });
    });
    await new Promise<void>((resolve) => intruder.once('close', () => resolve()));
    expect(intruderSaw.map((m) => m.type)).toEqual(['challenge', 'error']);
    expect(intruderSaw[1].code).toBe('E_AUTH');

    // 2. A real worker, and a peer that works correctly but first sends seven bad frames.
    const worker = new CliProcess([
      'worker',
      url,
      '--key-file',
      keyFile,
      '--capacity',
      '4',
      '--name',
      'honest',
    ]);
    started.push(worker);
    const errorCodes: string[] = [];
    let badFramesSent = false;
    let runtimes = new Map<number, ClientRuntime>();
    let ownIds: number[] = [];
    let maxFrameBytes = 0;
    let dim = 0;
    let downFieldDims: FieldDims = {};
    const finished = new Promise<void>((resolve) => {
      void open(url, (raw, ws) => {
        if (raw instanceof FrameElements) {
          const frame = readDownsFrame(raw, downFieldDims, dim);
          const ups: UpEntry[] = frame.entries.map((entry) =>
            honestUpEntry(runtimes, frame, entry),
          );
          const upsFrame = (changes: Partial<UpsFrame>): Uint8Array =>
            encodeRoundFrame(
              {
                type: 'ups',
                round: frame.round,
                exchange: frame.exchange,
                entries: ups,
                ...changes,
              },
              downFieldDims,
            );
          if (!badFramesSent) {
            badFramesSent = true;
            const up = ups[0];
            const [name, vector] = Object.entries(up.fields)[0];
            const nanValues = new Uint8Array(vector.values);
            new DataView(nanValues.buffer).setFloat64(0, Number.NaN, true);
            const otherClient = Array.from({ length: 8 }, (_, i) => i).find(
              (i) => !ownIds.includes(i),
            )!;
            // 0xc1 is the one byte MessagePack never uses (MessagePack spec, "formats").
            sendRaw(ws, Uint8Array.from([0xc1, 0x13, 0x37, 0x00]));
            sendRaw(ws, upsFrame({ round: frame.round + 7 }));
            sendRaw(ws, upsFrame({ entries: [...ups, { ...up, clientId: otherClient }] }));
            // Every entry is checked before any is used: one client twice spoils the frame.
            sendRaw(ws, upsFrame({ entries: [...ups, up] }));
            const smaller = toWire({
              dim: dim - 1,
              indices: null,
              values: new Float64Array(dim - 1),
            });
            sendRaw(
              ws,
              upsFrame({ entries: [{ ...up, fields: { ...up.fields, [name]: smaller } }] }),
            );
            sendRaw(
              ws,
              upsFrame({
                entries: [
                  { ...up, fields: { ...up.fields, [name]: { ...vector, values: nanValues } } },
                ],
              }),
            );
            sendRaw(ws, new Uint8Array(maxFrameBytes + 1));
          }
          sendRaw(ws, upsFrame({}));
          return;
        }
        const m = raw;
        switch (m.type) {
          case 'challenge':
            send(ws, {
              type: 'hello',
              protocolVersion: PROTOCOL_VERSION,
              workerName: 'hostile',
              capacity: 4,
              proof: proveKey(KEY, m.nonce as Uint8Array),
            });
            return;
          case 'welcome': {
            const wire = m.plan as unknown as WirePlan;
            const plan: WirePlan = { ...wire, scenario: validateScenario(wire.scenario) };
            ownIds = m.assignments as number[];
            dim = plan.dim;
            downFieldDims = downFieldDimsFor(plan);
            maxFrameBytes = (m.limits as { maxFrameBytes: number }).maxFrameBytes;
            runtimes = new Map(
              ownIds.map((id) => [
                id,
                new ClientRuntime(plan, id, clientObjective(plan.scenario, id)),
              ]),
            );
            send(ws, { type: 'ready' });
            return;
          }
          case 'error':
            errorCodes.push(m.code as string);
            return;
          case 'done':
            ws.close();
            resolve();
            return;
          default:
            return;
        }
      });
    });
    await finished;
    const exit = await coordinator.exit(40_000);
    expect(exit.code, coordinator.stderr).toBe(0);
    expect((await worker.exit(20_000)).code).toBe(0);

    expect([...errorCodes].sort()).toEqual([
      'E_CLIENT',
      'E_CLIENT',
      'E_DECODE',
      'E_DIMENSION',
      'E_NOT_FINITE',
      'E_ROUND',
      'E_SIZE',
    ]);
    const summary = JSON.parse(readFileSync(join(out, 'outcome.json'), 'utf8')) as {
      protocolErrors: Record<string, number>;
    };
    expect(summary.protocolErrors).toEqual({
      E_AUTH: 1,
      E_DECODE: 1,
      E_ROUND: 1,
      E_CLIENT: 2,
      E_DIMENSION: 1,
      E_NOT_FINITE: 1,
      E_SIZE: 1,
    });

    const clean = runInProcess(
      loadScenarioFile(join(repoRoot, 'scenarios/quickstart.yaml'), TWEAKS),
    );
    const expected = Buffer.alloc(clean.finalModel.length * 8);
    clean.finalModel.forEach((v, j) => expected.writeDoubleLE(v, j * 8));
    expect(readFileSync(join(out, 'model.f64')).equals(expected)).toBe(true);
  }, 60_000);
});
