// How many rows of a scenario's data were dropped for a missing value, for the theory report:
// a data set's loader and a data file with `missing: drop` drop and count; synthetic data has
// no missing values.

import type { Scenario } from '../scenario/schema.js';
import { scenarioDataset } from './dataset-pool.js';
import { fileDataShape } from './file-pool.js';

export function droppedRowCountOf(scenario: Scenario): number {
  switch (scenario.data.source) {
    case 'synthetic':
      return 0;
    case 'dataset':
      return scenarioDataset(scenario).droppedRowCount;
    case 'file':
      return fileDataShape(scenario).droppedRowCount;
  }
}
