// A data set scenario's pool: the package's data set loaded with the scenario's target and
// scaling, its targets as the problem needs them, and the natural key's values when the
// partition groups by one. The schema refuses a mismatched problem, target or key field by
// field (src/scenario/schema.ts); the checks here hold the same for a scenario built in code.

import type { Scenario } from '../scenario/schema.js';
import {
  datasetStandardizes,
  datasetTargetName,
  type DatasetName,
} from '../scenario/dataset-choices.js';
import { DataError } from './data-error.js';
import {
  datasetShape,
  INTERCEPT_FEATURE,
  loadDataset,
  type DatasetShape,
  type LabelledDataset,
} from './datasets.js';
import type { LabelledPool } from './partition.js';

type DatasetData = Extract<Scenario['data'], { source: 'dataset' }>;

export interface DatasetPool {
  featureCount: number;
  pool: LabelledPool & { features: Float64Array; targets: Float64Array };
  /**
   * The columns still to standardize over the training rows, once the test parts are drawn
   * (build-shard.ts); empty when the loader has standardized the whole set or none is asked.
   */
  columnsToStandardize: readonly number[];
}

function datasetDataOf(scenario: Scenario): DatasetData {
  const data = scenario.data;
  if (data.source !== 'dataset')
    throw new DataError('E_DATA_SPEC', 'not a data set scenario', 'data.source');
  return data;
}

/**
 * The scenario's data set, loaded as the scenario says (target, standardization). With a test
 * part the statistics must come from the training rows alone, so the loader leaves the scaling
 * to the caller (datasetPool).
 */
export function scenarioDataset(scenario: Scenario): LabelledDataset {
  const data = datasetDataOf(scenario);
  return loadDataset(data.name, {
    target: datasetTargetName(data),
    standardize: datasetStandardizes(data) && data.testFraction === 0,
  });
}

function checkProblemFits(scenario: Scenario, dataset: LabelledDataset): void {
  const { problem } = scenario;
  // A perceptron is a multiclass classifier like softmax (schema.ts, checkDatasetFits).
  const kindFits =
    problem.kind === dataset.kind || (dataset.kind === 'softmax' && problem.kind === 'perceptron');
  if (!kindFits) {
    throw new DataError(
      'E_DATA_SPEC',
      `data set ${dataset.name}, target ${dataset.target} needs problem.kind "${dataset.kind}", got "${problem.kind}"`,
      'problem.kind',
    );
  }
  if (
    (problem.kind === 'softmax' || problem.kind === 'perceptron') &&
    problem.classes !== dataset.classNames.length
  ) {
    throw new DataError(
      'E_DATA_SPEC',
      `data set ${dataset.name} has ${dataset.classNames.length} classes; problem.classes is ${problem.classes}`,
      'problem.classes',
    );
  }
}

/** The scenario's data set's size and keys, without copying its features. */
export function scenarioDatasetShape(scenario: Scenario): DatasetShape & { name: DatasetName } {
  const data = datasetDataOf(scenario);
  return { name: data.name, ...datasetShape(data.name, datasetTargetName(data)) };
}

/** The natural key's value of every sample, or undefined when the partition is not natural. */
export function naturalKeysOf(
  scenario: Scenario,
  dataset: Pick<LabelledDataset, 'name'> & DatasetShape,
): readonly string[] | undefined {
  const partition = datasetDataOf(scenario).partition;
  if (partition.kind !== 'natural') return undefined;
  const keys = dataset.keys[partition.key] as readonly string[] | undefined;
  if (keys === undefined) {
    const known = Object.keys(dataset.keys);
    throw new DataError(
      'E_DATA_SPEC',
      known.length === 0
        ? `data.partition.key "${partition.key}": data set ${dataset.name} has no key to split by`
        : `data.partition.key "${partition.key}": data set ${dataset.name} splits by ${known.join(' or ')}`,
      'data.partition.key',
    );
  }
  return keys;
}

export function datasetPool(scenario: Scenario): DatasetPool {
  const dataset = scenarioDataset(scenario);
  checkProblemFits(scenario, dataset);
  const pool = {
    features: dataset.features,
    targets: dataset.targets,
    labels: dataset.targets,
    keys: naturalKeysOf(scenario, dataset),
  };
  const data = datasetDataOf(scenario);
  const measured = dataset.featureNames.filter((name) => name !== INTERCEPT_FEATURE).length;
  const columnsToStandardize =
    datasetStandardizes(data) && data.testFraction > 0
      ? Array.from({ length: measured }, (_, j) => j)
      : [];
  return { featureCount: dataset.featureCount, pool, columnsToStandardize };
}
