// A downlink field sent exactly (compressor 'none' at f64) keeps no replica and its message is
// the broadcast itself, so the server encodes it once per exchange and every client's down holds
// that one vector (src/engine/server-runtime.ts, exactDowns). Checked here: the vector is shared
// within an exchange, is the broadcast bit for bit, is encoded afresh for the next exchange and
// round, and a field under a replica (top-k with error feedback) is still encoded per client.

import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { planFor } from '../../src/engine/in-process-engine.js';
import { ServerRuntime } from '../../src/engine/server-runtime.js';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';

const text = readFileSync(new URL('../../scenarios/quickstart.yaml', import.meta.url), 'utf8');

describe('exact downlink fields', () => {
  it('are encoded once per exchange and shared by every client', () => {
    const { plan } = planFor(scenarioFromText(text, 'quickstart.yaml', []));
    const server = new ServerRuntime(plan);
    const [exchange] = server.method.exchanges;
    const broadcast = server.broadcast(exchange);
    const downs = [0, 1, 2].map((id) => server.encodeDown(id, 1, exchange, broadcast));
    for (const name of Object.keys(broadcast)) {
      expect(downs[1][name]).toBe(downs[0][name]);
      expect(downs[2][name]).toBe(downs[0][name]);
      expect(downs[0][name].indices).toBeNull();
      expect(Array.from(downs[0][name].values)).toEqual(Array.from(broadcast[name]));
      // a copy, not the server's own state
      expect(downs[0][name].values).not.toBe(broadcast[name]);
    }
    expect(Object.keys(downs[0])).toEqual(Object.keys(broadcast));
    const next = server.encodeDown(0, 2, exchange, server.broadcast(exchange));
    for (const name of Object.keys(broadcast)) expect(next[name]).not.toBe(downs[0][name]);
  });

  it('under a replica are still encoded for each client', () => {
    const { plan } = planFor(
      scenarioFromText(text, 'quickstart.yaml', [
        'compression.downlink.default:{kind: top-k, fraction: 0.3, errorFeedback: true}',
      ]),
    );
    const server = new ServerRuntime(plan);
    const [exchange] = server.method.exchanges;
    const broadcast = server.broadcast(exchange);
    const a = server.encodeDown(0, 1, exchange, broadcast);
    const b = server.encodeDown(1, 1, exchange, broadcast);
    for (const name of Object.keys(broadcast)) expect(a[name]).not.toBe(b[name]);
  });
});
