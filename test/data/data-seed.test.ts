// The data follows dataSeed (absent: seed), so compare's repeats can move the seed over fixed
// data; a scenario without dataSeed builds exactly the shards it always built.
import { describe, expect, it } from 'vitest';
import { buildAllShards, sampleCountsOf } from '../../src/data/build-shard.js';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';
import { problemHashOf } from '../../src/theory/plan-theory.js';

const base = loadScenarioFile('scenarios/quickstart.yaml');

describe('the data seed', () => {
  it('absent, it is the seed: the same shards, counts and problem hash as dataSeed = seed', () => {
    const explicit = { ...base, dataSeed: base.seed };
    expect(buildAllShards(explicit)).toEqual(buildAllShards(base));
    expect(problemHashOf(explicit)).toBe(problemHashOf(base));
  });

  it('another seed over the same dataSeed keeps the data and the problem; another dataSeed changes them', () => {
    const moved = { ...base, seed: base.seed + 1, dataSeed: base.seed };
    expect(buildAllShards(moved)).toEqual(buildAllShards(base));
    expect(sampleCountsOf(moved)).toEqual(sampleCountsOf(base));
    expect(problemHashOf(moved)).toBe(problemHashOf(base));
    const redrawn = { ...base, dataSeed: base.seed + 1 };
    expect(buildAllShards(redrawn)[0].features).not.toEqual(buildAllShards(base)[0].features);
    expect(problemHashOf(redrawn)).not.toBe(problemHashOf(base));
  });
});
