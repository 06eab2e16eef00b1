// After a resumed connection both ends restart a client's compression replicas; the two sides
// must then agree again bit for bit (the replica scheme's invariant: both ends add the same
// decompressed messages in the same order; see src/compress/replica.ts).
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { planFor } from '../../src/engine/in-process-engine.js';
import { ServerRuntime } from '../../src/engine/server-runtime.js';
import { ClientRuntime } from '../../src/engine/client-runtime.js';

const text = readFileSync(new URL('../../scenarios/quickstart.yaml', import.meta.url), 'utf8');

describe('replica reset on both ends', () => {
  it('restarts both ends from zero, and the next message rebuilds the client replica exactly', () => {
    const scenario = scenarioFromText(text, 'quickstart.yaml', [
      'compression.downlink.default:{kind: top-k, fraction: 0.3, errorFeedback: true}',
      'compression.uplink.fields:{gradient: {kind: top-k, fraction: 0.3, errorFeedback: true}}',
    ]);
    const { plan, theory } = planFor(scenario);
    const server = new ServerRuntime(plan);
    const client = new ClientRuntime(plan, 0, theory.instance.objectives[0]);
    const exchanges = server.method.exchanges;
    const step = (round: number) => {
      for (const exchange of exchanges) {
        const down = server.encodeDown(0, round, exchange, server.broadcast(exchange));
        const up = client.work(round, exchange, down, 5, plan.methodConfig.stepSize / 5);
        server.aggregate(exchange, [
          {
            clientId: 0,
            stepsTaken: up.stepsTaken,
            stepSize: plan.methodConfig.stepSize / 5,
            encodedUp: up.encodedUp,
          },
        ]);
      }
    };
    for (let round = 1; round <= 3; round++) step(round);
    server.resetReplicas(0);
    client.resetReplicas();
    const snapshot = client.snapshot();
    for (const replica of Object.values(snapshot.downlinkReplicas))
      expect(replica.every((v) => v === 0)).toBe(true);
    expect((snapshot.uplinkMemories.gradient ?? new Float64Array(0)).every((v) => v === 0)).toBe(
      true,
    );
    // the delta's error-feedback memory is the client's own and survives the reset
    expect(snapshot.uplinkMemories.delta).toBeDefined();
    // After the reset the next message rebuilds both sides' replicas from zero, identically.
    const down = server.encodeDown(0, 4, exchanges[0], server.broadcast(exchanges[0]));
    client.work(4, exchanges[0], down, 5, plan.methodConfig.stepSize / 5);
    const after = client.snapshot();
    expect(Array.from(after.downlinkReplicas.model)).toEqual(
      Array.from(
        new Float64Array(plan.dim).map((_, j) => {
          let v = 0;
          const cv = down.model;
          if (cv.indices === null) return cv.values[j];
          for (let t = 0; t < cv.indices.length; t++) if (cv.indices[t] === j) v = cv.values[t];
          return v;
        }),
      ),
    );
  });
});
