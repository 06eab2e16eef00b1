// A client's state survives the trip to a pool thread and back: running every exchange through
// runClientTask (fresh runtime, restore the snapshot, work, snapshot again; the snapshot
// structured-cloned each way as worker_threads does) gives the very bits that one long-lived
// ClientRuntime gives; and a ClientHost whose clients are heavy enough for its thread pool
// computes the same bits through the real pool. SCAFFOLD keeps a control variate, and top-k with
// error feedback on both channels keeps memories and replicas, so every part of the snapshot
// matters.

import { describe, expect, it } from 'vitest';
import { runClientTask } from '../../client/client-task.js';
import { ClientHost } from '../../client/client-host.js';
import { hostsInline } from '../../client/hosting-mode.js';
import { ClientRuntime, type EncodedFields } from '../../src/engine/client-runtime.js';
import { ServerRuntime } from '../../src/engine/server-runtime.js';
import { planFor } from '../../src/engine/in-process-engine.js';
import { clientObjective } from '../../src/data/problem-instance.js';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';
import { repoRoot } from '../integration/cli-process.js';

function bits(fields: EncodedFields): string {
  return JSON.stringify(
    Object.entries(fields).map(([name, cv]) => [
      name,
      cv.dim,
      cv.indices ? Array.from(cv.indices) : null,
      Array.from(new Uint8Array(cv.values.buffer, cv.values.byteOffset, cv.values.byteLength)),
    ]),
  );
}

describe('clientTask snapshots', () => {
  it('continue a client bit for bit across fresh runtimes', () => {
    const scenario = loadScenarioFile(`${repoRoot}scenarios/quickstart.yaml`, [
      'method.name:scaffold',
      'compression.uplink.default:{kind: top-k, fraction: 0.25}',
      'compression.downlink.default:{kind: top-k, fraction: 0.5}',
    ]);
    const { plan } = planFor(scenario);
    const server = new ServerRuntime(plan);
    const clientId = 3;
    const direct = new ClientRuntime(plan, clientId, clientObjective(scenario, clientId));
    const objective = clientObjective(scenario, clientId);
    let snapshot = null;
    for (let round = 1; round <= 4; round++) {
      const encodedDown = server.encodeDown(clientId, round, 'local', server.broadcast('local'));
      const expected = direct.work(round, 'local', encodedDown, 5, plan.methodConfig.stepSize);
      const result = runClientTask(
        structuredClone(plan),
        objective,
        structuredClone({
          clientId,
          snapshot,
          round,
          exchange: 'local',
          encodedDown,
          localSteps: 5,
          stepSize: plan.methodConfig.stepSize,
        }),
      );
      if ('nonFinite' in result) throw new Error(result.nonFinite);
      snapshot = structuredClone(result.snapshot);
      expect(bits(result.encodedUp)).toBe(bits(expected.encodedUp));
      expect(result.stepsTaken).toBe(expected.stepsTaken);
      server.aggregate('local', [
        {
          clientId,
          stepsTaken: expected.stepsTaken,
          stepSize: plan.methodConfig.stepSize,
          encodedUp: expected.encodedUp,
        },
      ]);
    }
  });
});

describe('ClientHost on its thread pool', () => {
  it('computes heavy clients on the pool, bit for bit what direct runtimes compute', async () => {
    // 500 samples x d = 100 x 5 local steps: 4 n d tau = 1e6 flops an exchange, at the inline
    // bound (client/hosting-mode.ts), so the host uses its pool.
    const scenario = loadScenarioFile(`${repoRoot}scenarios/quickstart.yaml`, [
      'method.name:scaffold',
      'data.samplesPerClient:500',
      'data.features:100',
    ]);
    const { plan } = planFor(scenario);
    const ids = [2, 5];
    expect(hostsInline(plan, ids, 2)).toBe(false);
    const host = new ClientHost(plan, ids, { threadsMax: 2 });
    try {
      const server = new ServerRuntime(plan);
      const direct = ids.map((id) => new ClientRuntime(plan, id, clientObjective(scenario, id)));
      for (let round = 1; round <= 3; round++) {
        const broadcast = server.broadcast('local');
        const downs = ids.map((id) => server.encodeDown(id, round, 'local', broadcast));
        const hosted = await Promise.all(
          ids.map((clientId, i) =>
            host.work({
              clientId,
              round,
              exchange: 'local',
              encodedDown: downs[i],
              localSteps: 5,
              stepSize: plan.methodConfig.stepSize,
            }),
          ),
        );
        ids.forEach((_, i) => {
          const expected = direct[i].work(round, 'local', downs[i], 5, plan.methodConfig.stepSize);
          expect(bits(hosted[i].encodedUp), `round ${round} client ${ids[i]}`).toBe(
            bits(expected.encodedUp),
          );
        });
        server.aggregate(
          'local',
          ids.map((clientId, i) => ({
            clientId,
            stepsTaken: hosted[i].stepsTaken,
            stepSize: plan.methodConfig.stepSize,
            encodedUp: hosted[i].encodedUp,
          })),
        );
      }
    } finally {
      await host.close();
    }
  }, 60_000);
});
