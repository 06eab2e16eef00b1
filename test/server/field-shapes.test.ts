// The coordinator validates every up against the field table it reads off one probe round
// (server/field-shapes.ts). The table must name exactly the fields, with their dimensions, that
// a run really moves, compressed or not: checked here for every method against one round of the
// runtimes themselves, with top-k on both channels (compression keeps the field names).

import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { planFor } from '../../src/engine/in-process-engine.js';
import { ClientRuntime, type EncodedFields } from '../../src/engine/client-runtime.js';
import { ServerRuntime } from '../../src/engine/server-runtime.js';
import { fieldShapesFor } from '../../server/field-shapes.js';

const text = readFileSync(new URL('../../scenarios/quickstart.yaml', import.meta.url), 'utf8');
const METHODS = ['gd', 'fedavg', 'fedprox', 'fednova', 'scaffold', 'fedlin', 'fedsplit'];

const dims = (fields: EncodedFields) =>
  Object.fromEntries(Object.entries(fields).map(([name, cv]) => [name, cv.dim]));

describe('fieldShapesFor', () => {
  for (const method of METHODS) {
    it(`${method}: the fields of a compressed round, each way, with their dimensions`, () => {
      const scenario = scenarioFromText(text, 'quickstart.yaml', [
        `method.name:${method}`,
        'compression.uplink.default:{kind: top-k, fraction: 0.25}',
        'compression.downlink.default:{kind: top-k, fraction: 0.5}',
      ]);
      const { plan, theory } = planFor(scenario);
      const server = new ServerRuntime(plan);
      const client = new ClientRuntime(plan, 3, theory.instance.objectives[3]);
      const seen = {
        down: {} as Record<string, Record<string, number>>,
        up: {} as Record<string, Record<string, number>>,
      };
      for (const exchange of server.method.exchanges) {
        const down = server.encodeDown(3, 1, exchange, server.broadcast(exchange));
        const result = client.work(1, exchange, down, 2, plan.methodConfig.stepSize);
        seen.down[exchange] = dims(down);
        seen.up[exchange] = dims(result.encodedUp);
        server.aggregate(exchange, [
          {
            clientId: 3,
            stepsTaken: result.stepsTaken,
            stepSize: plan.methodConfig.stepSize,
            encodedUp: result.encodedUp,
          },
        ]);
      }
      expect(fieldShapesFor(plan, theory.instance.objectives[0])).toEqual(seen);
    });
  }
});
