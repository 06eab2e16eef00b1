// A worker reads a file scenario's data itself and holds its copy against the SHA-256 the plan
// carries: a copy that differs is refused at the welcome, before any client is built, with an
// E_DATA_COPY error to the coordinator naming the file and both hashes, and the worker stops.
// The coordinator here is a plain WebSocket server on 127.0.0.1 speaking the protocol.

import { createHash } from 'node:crypto';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { WebSocketServer, type WebSocket } from 'ws';
import { afterEach, describe, expect, it } from 'vitest';
import { Worker } from '../../client/worker.js';
import { planFor } from '../../src/engine/in-process-engine.js';
import { fieldShapesFor } from '../../server/field-shapes.js';
import {
  createChallengeNonce,
  encodeMessage,
  HANDSHAKE_LIMITS,
  limitsForPlan,
  PROTOCOL_VERSION,
  receiveMessage,
  type ControlMessage,
  type Message,
} from '../../src/protocol/index.js';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';

const servers: WebSocketServer[] = [];
afterEach(async () => {
  for (const wss of servers.splice(0)) await new Promise<void>((r) => wss.close(() => r()));
});

const sha256 = (text: string) => createHash('sha256').update(text).digest('hex');

describe('a worker whose data file differs from the plan', () => {
  it('is refused with the file and both hashes', async () => {
    const folder = mkdtempSync(join(tmpdir(), 'roundwire-worker-file-'));
    const file = join(folder, 'rows.csv');
    const planned = 'k,a,y\np,1,2\np,2,3\nq,3,5\nq,4,4\n';
    writeFileSync(file, planned);
    const scenario = scenarioFromText(
      `name: copy-check
seed: 1
problem: {kind: least-squares}
data: {source: file, path: ${file}, format: csv, target: y, features: [a], partition: {kind: natural, key: k}}
clients: {count: 2}
method: {name: gd}
run: {rounds: 1}
`,
      'copy-check.yaml',
    );
    const { plan, theory } = planFor(scenario);
    const shapes = fieldShapesFor(plan, theory.instance.objectives[0]);
    // The worker's copy: one value changed after the plan was made.
    const copy = planned.replace('q,4,4', 'q,4,6');
    writeFileSync(file, copy);

    const wss = new WebSocketServer({ host: '127.0.0.1', port: 0 });
    servers.push(wss);
    await new Promise<void>((r) => wss.once('listening', () => r()));
    const received: Message[] = [];
    let errorArrived: () => void = () => undefined;
    const errorReceived = new Promise<void>((resolve) => (errorArrived = resolve));
    wss.on('connection', (ws: WebSocket) => {
      const send = (m: ControlMessage) => ws.send(encodeMessage(m), { binary: true });
      ws.on('message', (data: Buffer) => {
        const m = receiveMessage(new Uint8Array(data), {
          limits: HANDSHAKE_LIMITS,
          expectedTypes: ['hello', 'error'],
          expectedRound: null,
          expectedExchange: null,
          ownedClientIds: null,
          fieldDims: null,
          auth: null,
        });
        received.push(m);
        if (m.type === 'error') errorArrived();
        if (m.type === 'hello')
          send({
            type: 'welcome',
            assignments: [0, 1],
            plan: { scenario: plan.scenario, methodConfig: plan.methodConfig, dim: plan.dim },
            limits: limitsForPlan({
              downFieldDims: shapes.down,
              upFieldDims: shapes.up,
              clientsPerWorker: 2,
            }),
          });
      });
      send({ type: 'challenge', protocolVersion: PROTOCOL_VERSION, nonce: createChallengeNonce() });
    });
    const { port } = wss.address() as { port: number };
    const worker = new Worker({
      url: `ws://127.0.0.1:${port}`,
      key: new Uint8Array(32),
      capacity: 2,
      workerName: 'copy-check',
      threadsMax: 1,
      log: () => undefined,
    });
    const reason = `${file}: this copy has SHA-256 ${sha256(copy)}, the plan's has ${sha256(planned)}`;
    await expect(
      Promise.race([
        worker.run(),
        new Promise<never>((_, reject) =>
          setTimeout(() => reject(new Error('the worker did not stop in 10 s')), 10_000),
        ),
      ]),
    ).rejects.toThrow(`cannot host clients of this plan: ${reason}`);
    await Promise.race([
      errorReceived,
      new Promise<never>((_, reject) =>
        setTimeout(() => reject(new Error('no error message in 5 s')), 5_000),
      ),
    ]);
    expect(plan.scenario.data).toMatchObject({ sha256: sha256(planned) });
    const errors = received.filter((m) => m.type === 'error');
    expect(errors).toEqual([{ type: 'error', code: 'E_DATA_COPY', message: reason }]);
  }, 20_000);
});
