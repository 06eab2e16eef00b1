// The reference a perceptron is measured against: deterministic, cached per problem hash and
// reused (a damaged cached entry is run again), and below softmax's optimum on the same data.
import { readFileSync } from 'node:fs';
import { describe, expect, it, vi } from 'vitest';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import type { StoredTheory, TheoryStore } from '../../src/theory/plan-theory.js';
import { referenceRun } from '../../src/theory/reference-run.js';
import { buildProblemInstance } from '../../src/data/problem-instance.js';
import { initialModelOf } from '../../src/problem/initial-model.js';
import { norm2 } from '../../src/vec/kernels.js';

const bundled = readFileSync(
  new URL('../../scenarios/iris-perceptron.yaml', import.meta.url),
  'utf8',
);

/** A store in memory that counts its reads and writes. */
function memoryStore() {
  const entries = new Map<string, StoredTheory>();
  const log = { reads: 0, writes: 0, warnings: [] as string[] };
  const store: TheoryStore = {
    read(hash, version) {
      log.reads++;
      const entry = entries.get(`${hash}/${version}`);
      return entry === undefined ? null : structuredClone(entry);
    },
    write(hash, version, entry) {
      log.writes++;
      entries.set(`${hash}/${version}`, JSON.parse(JSON.stringify(entry)) as StoredTheory);
    },
    warn(message) {
      log.warnings.push(message);
    },
  };
  return { store, entries, log };
}

/** plan-theory with an empty memory cache, as in a fresh process. */
async function freshPlanTheory() {
  vi.resetModules();
  return import('../../src/theory/plan-theory.js');
}

describe('the reference run of a perceptron', () => {
  it('descends from the start to a point of small gradient, the same bits each time', () => {
    const scenario = scenarioFromText(bundled, 'iris-perceptron.yaml');
    const { global, dim } = buildProblemInstance(scenario);
    const start = initialModelOf({ scenario, dim });
    const first = referenceRun(global, start, 60);
    const again = referenceRun(global, start, 60);
    expect(Array.from(again.x)).toEqual(Array.from(first.x));
    expect(first.loss).toBeLessThan(global.loss(start));
    const g0 = new Float64Array(dim);
    global.gradient(start, g0);
    // Common practice: a descent method's gradient norm falls by orders of magnitude.
    expect(first.gradientNorm).toBeLessThan(1e-2 * norm2(g0));
  });

  it('is cached per problem hash and reused; a damaged entry is run again', async () => {
    const scenario = scenarioFromText(bundled, 'iris-perceptron.yaml');
    const { store, entries, log } = memoryStore();
    let planTheory = await freshPlanTheory();
    planTheory.useTheoryStore(store);
    const first = planTheory.theoryOf(scenario);
    expect(first.reference).not.toBeNull();
    expect(log.writes).toBe(1);
    const [key] = entries.keys();
    expect(key.startsWith(planTheory.problemHashOf(scenario))).toBe(true);
    // The stored entry says what it is: a reference with no L or mu.
    expect(entries.get(key)!.constants.smoothness).toBeNull();
    expect(entries.get(key)!.reference).toEqual(first.reference);

    planTheory = await freshPlanTheory();
    planTheory.useTheoryStore(store);
    const reused = planTheory.theoryOf(scenario);
    expect(log.writes).toBe(1);
    expect(Array.from(reused.optimum.x)).toEqual(Array.from(first.optimum.x));
    expect(reused.optimum.loss).toBe(first.optimum.loss);
    expect(Number.isNaN(reused.constants.smoothness)).toBe(true);
    expect(log.warnings).toEqual([]);

    entries.get(key)!.optimum.loss += 1e-3;
    planTheory = await freshPlanTheory();
    planTheory.useTheoryStore(store);
    const rerun = planTheory.theoryOf(scenario);
    expect(log.warnings).toHaveLength(1);
    expect(log.warnings[0]).toMatch(/does not reproduce its loss/);
    expect(log.writes).toBe(2);
    expect(rerun.optimum.loss).toBe(first.optimum.loss);
    planTheory.useTheoryStore(null);
  });

  it("reaches a lower training loss than softmax's optimum on the same split", async () => {
    const perceptron = scenarioFromText(bundled, 'iris-perceptron.yaml');
    const softmax = scenarioFromText(bundled, 'iris-perceptron.yaml', [
      'problem:{kind: softmax, regularization: 0.001, classes: 3}',
    ]);
    const planTheory = await freshPlanTheory();
    const network = planTheory.theoryOf(perceptron);
    const linear = planTheory.theoryOf(softmax);
    // Same data: the shards are the same split of iris (the perceptron's data layer is softmax's).
    expect(network.instance.sampleCounts).toEqual(linear.instance.sampleCounts);
    expect(linear.reference).toBeNull();
    // A hidden layer can only add expressive power; a sanity check, not a number.
    expect(network.optimum.loss).toBeLessThan(linear.optimum.loss);
  });
});
