// A worker checks every downs frame through receiveMessage against the fields its plan's method
// sends (downFieldDimsFor): an unknown exchange is E_ROUND, a wrong dimension E_DIMENSION, more
// field slots than the exchange has E_TYPE; each gets an error reply and the worker goes on to
// answer a good frame. The coordinator here is a plain WebSocket server on 127.0.0.1 speaking the protocol.

import { readFileSync } from 'node:fs';
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
  ROUND_FRAME_LAYOUT,
  toWire,
  type ControlMessage,
  type Message,
} from '../../src/protocol/index.js';
import { encodeValue } from '../../src/protocol/codec.js';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';

const text = readFileSync(new URL('../../scenarios/quickstart.yaml', import.meta.url), 'utf8');

const servers: WebSocketServer[] = [];
afterEach(async () => {
  for (const wss of servers.splice(0)) await new Promise<void>((r) => wss.close(() => r()));
});

function dense(dim: number) {
  return toWire({ dim, indices: null, values: new Float64Array(dim) });
}

/** A downs frame as the layout writes it (round-frame-layout.ts), whatever its contents. */
function rawDowns(exchangeIndex: number, common: unknown[], stepSize: number): Uint8Array {
  return encodeValue([
    1,
    ROUND_FRAME_LAYOUT,
    1,
    exchangeIndex,
    null,
    common,
    [0, 1, stepSize, common.map(() => null)],
  ]);
}

function vector(dim: number): unknown[] {
  const wv = dense(dim);
  return [wv.dim, wv.width, wv.count, wv.indices, wv.values];
}

describe('a worker receiving downs', () => {
  it('refuses a bad exchange, dimension or field with its code and answers a good downs frame', async () => {
    const scenario = scenarioFromText(text, 'quickstart.yaml', []);
    const { plan, theory } = planFor(scenario);
    const shapes = fieldShapesFor(plan, theory.instance.objectives[0]);
    // FedLin (the quickstart's method): the 'gradient' exchange, the first, sends the model down.
    expect(Object.keys(shapes.down)).toEqual(['gradient', 'local']);
    expect(shapes.down.gradient).toEqual({ model: plan.dim });
    const stepSize = plan.methodConfig.stepSize;
    const good = rawDowns(0, [vector(plan.dim)], stepSize);
    const bad = [
      rawDowns(7, [vector(plan.dim)], stepSize),
      rawDowns(0, [vector(plan.dim - 1)], stepSize),
      rawDowns(0, [vector(plan.dim), vector(plan.dim)], stepSize),
    ];

    const wss = new WebSocketServer({ host: '127.0.0.1', port: 0 });
    servers.push(wss);
    await new Promise<void>((r) => wss.once('listening', () => r()));
    const received: Message[] = [];
    wss.on('connection', (ws: WebSocket) => {
      const send = (m: ControlMessage) => ws.send(encodeMessage(m), { binary: true });
      ws.on('message', (data: Buffer) => {
        const m = receiveMessage(new Uint8Array(data), {
          limits: { ...HANDSHAKE_LIMITS, maxVectorDim: plan.dim, maxFieldsPerMessage: 4 },
          expectedTypes: ['hello', 'ready', 'ups', 'error'],
          expectedRound: null,
          expectedExchange: null,
          ownedClientIds: null,
          fieldDims: shapes.up,
          auth: null,
        });
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
          for (const frame of [...bad, good]) ws.send(frame, { binary: true });
        }
        if (m.type === 'ups') send({ type: 'done', reason: 'stopped' });
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
      'downs.exchange: index 7, the method has 2 exchanges',
      `downs.common.model.dim: the plan says ${plan.dim}, got ${plan.dim - 1}`,
      'downs.common: 2 slots, the exchange "gradient" has 1 fields (model)',
    ]);
    // Ready once, when its client's data was built, ahead of its ups (messages.ts, ready).
    const types = received.map((m) => m.type);
    expect(types.filter((t) => t === 'ready')).toHaveLength(1);
    expect(types.indexOf('ready')).toBeGreaterThan(types.indexOf('hello'));
    expect(types.indexOf('ready')).toBeLessThan(types.indexOf('ups'));
    const ups = received.filter((m) => m.type === 'ups');
    expect(ups).toHaveLength(1);
    expect(ups[0]).toMatchObject({ round: 1, exchange: 'gradient' });
    expect(ups[0].entries.map((e) => e.clientId)).toEqual([0]);
    expect(Object.keys(ups[0].entries[0].fields)).toEqual(Object.keys(shapes.up.gradient));
  }, 30_000);
});
