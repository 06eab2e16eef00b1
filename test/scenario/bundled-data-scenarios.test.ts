// The bundled scenarios on real data split naturally (a package's data set by its key, a CSV
// file of our own by its branch column): each loads, has one client per distinct key value, and
// a few rounds in process lower f - f* from the start.

import { describe, expect, it } from 'vitest';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';
import { runInProcess } from '../../src/engine/in-process-engine.js';
import { sampleCountsOf } from '../../src/data/build-shard.js';
import { fileDataShape } from '../../src/data/file-pool.js';
import { scenarioDatasetShape } from '../../src/data/dataset-pool.js';

const ROUNDS = 3;

const SCENARIOS = [
  'life-expectancy-by-country',
  'penguin-islands',
  'car-makers-by-region',
  'bakery-sales',
] as const;

function distinctKeyCount(scenario: ReturnType<typeof loadScenarioFile>): number {
  const data = scenario.data;
  if (data.partition.kind !== 'natural') throw new Error('expected a natural split');
  const keys =
    data.source === 'file'
      ? fileDataShape(scenario).keys
      : scenarioDatasetShape(scenario).keys[data.partition.key];
  return new Set(keys).size;
}

describe('bundled scenarios split by a key', () => {
  it.each(SCENARIOS)('%s: one client per key value, and a few rounds make progress', (name) => {
    const scenario = loadScenarioFile(`scenarios/${name}.yaml`, [`run.rounds:${ROUNDS}`]);
    expect(scenario.clients.count).toBe(distinctKeyCount(scenario));
    expect(sampleCountsOf(scenario).every((n) => n > 0)).toBe(true);
    const result = runInProcess(scenario);
    expect(result.stopReason).toBe('rounds-complete');
    const { global } = result.theory.instance;
    const fStar = result.theory.optimum.loss;
    const start = new Float64Array(result.finalModel.length);
    expect(global.loss(result.finalModel) - fStar).toBeLessThan(global.loss(start) - fStar);
  });
});
