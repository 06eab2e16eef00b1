// A worker checks every down against downFieldDimsFor (read off the method's broadcast); the
// coordinator sends what its probe round (server/field-shapes.ts) reads off a real round. The two
// must name the same fields with the same dimensions, for every method, compressed or not.

import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { planFor } from '../../src/engine/in-process-engine.js';
import { downFieldDimsFor } from '../../src/engine/down-field-dims.js';
import { fieldShapesFor } from '../../server/field-shapes.js';

const text = readFileSync(new URL('../../scenarios/quickstart.yaml', import.meta.url), 'utf8');
const METHODS = ['gd', 'fedavg', 'fedprox', 'fednova', 'scaffold', 'fedlin', 'fedsplit'];
const DOWNLINKS = [[], ['compression.downlink.default:{kind: top-k, fraction: 0.5}']];

describe('downFieldDimsFor', () => {
  for (const method of METHODS) {
    it(`${method}: the fields and dimensions the coordinator's probe round sends down`, () => {
      for (const downlink of DOWNLINKS) {
        const scenario = scenarioFromText(text, 'quickstart.yaml', [
          `method.name:${method}`,
          ...downlink,
        ]);
        const { plan, theory } = planFor(scenario);
        const expected = fieldShapesFor(plan, theory.instance.objectives[0]).down;
        expect(Object.keys(expected).length).toBeGreaterThan(0);
        expect(downFieldDimsFor(plan)).toEqual(expected);
      }
    });
  }
});
