// A worker checks every down through receiveMessage against the fields its plan's method sends
// (downFieldDimsFor): an unknown exchange is E_ROUND, a wrong dimension E_DIMENSION, a field the
// exchange does not carry E_TYPE; each gets an error reply and the worker goes on to answer a
// good down. The coordinator here is a plain WebSocket server on 127.0.0.1 speaking the protocol.

import { readFileSync } from 'node:fs';
import { WebSocketServer, type WebSocket } from 'ws';
import { afterEach, describe, expect, it } from 'vitest';
import { Worker } from '../../client/worker.js';
import { planFor } from '../../src/engine/in-process-engine.js';
import { fieldShapesFor } from '../../server/field-shapes.js';
import {
  createChallengeNonce,
  decodeMessage,
  encodeMessage,
  HANDSHAKE_LIMITS,
  limitsForPlan,
  PROTOCOL_VERSION,
  toWire,
  type DownMessage,
  type Message,
} from '../../src/protocol/index.js';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';

const text = readFileSync(new URL('../../scenarios/quickstart.yaml', import.meta.url), 'utf8');

const servers: WebSocketServer[] = [];
afterEach(async () => {
  for (const wss of servers.splice(0)) await new Promise<void>((r) => wss.close(() => r()));
});

function dense(dim: number) {
  return toWire({ dim, indices: null, values: new Float64Array(dim) });
}

describe('a worker receiving downs', () => {
  it('refuses a bad exchange, dimension or field with its code and answers a good down', async () => {
    const scenario = scenarioFromText(text, 'quickstart.yaml', []);
    const { plan, theory } = planFor(scenario);
    const shapes = fieldShapesFor(plan, theory.instance.objectives[0]);
    // FedLin (the quickstart's method): the 'gradient' exchange sends the model down.
    expect(shapes.down.gradient).toEqual({ model: plan.dim });
    const good: DownMessage = {
      type: 'down',
      round: 1,
      exchange: 'gradient',
      clientId: 0,
      localSteps: 1,
      stepSize: plan.methodConfig.stepSize,
      fields: { model: dense(plan.dim) },
      deadlineSeconds: null,
    };
    const bad: DownMessage[] = [
      { ...good, exchange: 'nonsense' },
      { ...good, fields: { model: dense(plan.dim - 1) } },
      { ...good, fields: { gradient: dense(plan.dim) } },
    ];

    const wss = new WebSocketServer({ host: '127.0.0.1', port: 0 });
    servers.push(wss);
    await new Promise<void>((r) => wss.once('listening', () => r()));
    const received: Message[] = [];
    wss.on('connection', (ws: WebSocket) => {
      const send = (m: Message) => ws.send(encodeMessage(m), { binary: true });
      ws.on('message', (data: Buffer) => {
        const m = decodeMessage(new Uint8Array(data), HANDSHAKE_LIMITS.maxFrameBytes) as Message;
        received.push(m);
        if (m.type === 'hello') {
          send({
            type: 'welcome',
            assignments: [0],
            plan: { scenario: plan.scenario, methodConfig: plan.methodConfig, dim: plan.dim },
            limits: limitsForPlan({
              downFieldDims: shapes.down,
              upFieldDims: shapes.up,
              clientsPerWorker: 1,
            }),
          });
          for (const down of [...bad, good]) send(down);
        }
        if (m.type === 'up') send({ type: 'done', reason: 'stopped' });
      });
      send({ type: 'challenge', protocolVersion: PROTOCOL_VERSION, nonce: createChallengeNonce() });
    });
    const { port } = wss.address() as { port: number };
    const worker = new Worker({
      url: `ws://127.0.0.1:${port}`,
      key: new Uint8Array(32),
      capacity: 1,
      workerName: 'test-worker',
      threadsMax: 1,
      log: () => undefined,
    });
    const exit = await Promise.race([
      worker.run(),
      new Promise<never>((_, reject) =>
        setTimeout(() => reject(new Error('the worker did not finish in 20 s')), 20_000),
      ),
    ]);

    expect(exit).toEqual({ reason: 'stopped', clientIds: [0] });
    const errors = received.filter((m) => m.type === 'error');
    expect(errors.map((m) => m.code)).toEqual(['E_ROUND', 'E_DIMENSION', 'E_TYPE']);
    expect(errors.map((m) => m.message)).toEqual([
      'down.exchange: "nonsense" is not an exchange of this method',
      `down.fields.model.dim: the plan says ${plan.dim}, got ${plan.dim - 1}`,
      'down.fields.gradient: not a field of this exchange (expected model)',
    ]);
    const ups = received.filter((m) => m.type === 'up');
    expect(ups).toHaveLength(1);
    expect(ups[0]).toMatchObject({ round: 1, exchange: 'gradient', clientId: 0 });
    expect(Object.keys(ups[0].fields)).toEqual(Object.keys(shapes.up.gradient));
  }, 30_000);
});
