// An instance made from another instance's shards (problemInstanceOf, as the coordinator's oracle
// thread does with the shards it is handed) is the instance built from the scenario, bit for bit:
// the shards' bytes, the weights, f and grad f at a point. And it refuses a shard count that is
// not the scenario's.

import { describe, expect, it } from 'vitest';
import { buildProblemInstance, problemInstanceOf } from '../../src/data/problem-instance.js';
import type { Shard } from '../../src/problem/shard.js';
import { scenarioWith } from './scenario-fixture.js';

const bytesOf = (a: Float64Array) => Buffer.from(a.buffer, a.byteOffset, a.byteLength);

/** A copy with buffers of its own, as structured clone or a transfer hands it to a thread. */
const copyOf = (shard: Shard): Shard =>
  structuredClone({ ...shard, features: shard.features.slice(), targets: shard.targets.slice() });

describe('problemInstanceOf', () => {
  for (const kind of ['logistic', 'least-squares'] as const) {
    it(`gives the built ${kind} instance's bits from copies of its shards`, () => {
      const scenario = scenarioWith(
        { kind, regularization: 0.01 },
        { source: 'synthetic', features: 7, samplesPerClient: { uniform: [30, 60] } },
        5,
      );
      const built = buildProblemInstance(scenario);
      const made = problemInstanceOf(
        scenario,
        built.objectives.map((o) => copyOf(o.shard)),
      );
      expect(made.sampleCounts).toEqual(built.sampleCounts);
      expect(bytesOf(made.weights).equals(bytesOf(built.weights))).toBe(true);
      made.objectives.forEach((o, i) => {
        expect(bytesOf(o.shard.features).equals(bytesOf(built.objectives[i].shard.features))).toBe(
          true,
        );
        expect(bytesOf(o.shard.targets).equals(bytesOf(built.objectives[i].shard.targets))).toBe(
          true,
        );
      });
      const x = Float64Array.from({ length: built.dim }, (_, i) => Math.sin(i + 1));
      expect(Object.is(made.global.loss(x), built.global.loss(x))).toBe(true);
      const madeGradient = new Float64Array(built.dim);
      const builtGradient = new Float64Array(built.dim);
      made.global.gradient(x, madeGradient);
      built.global.gradient(x, builtGradient);
      expect(bytesOf(madeGradient).equals(bytesOf(builtGradient))).toBe(true);
    });
  }

  it('refuses shards that are not one per client', () => {
    const scenario = scenarioWith(
      { kind: 'logistic', regularization: 0.01 },
      { source: 'synthetic', features: 3, samplesPerClient: 10 },
      4,
    );
    const shards = buildProblemInstance(scenario).objectives.map((o) => o.shard);
    expect(() => problemInstanceOf(scenario, shards.slice(1))).toThrow('4 shards expected, got 3');
  });
});
