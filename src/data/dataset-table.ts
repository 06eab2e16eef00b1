// What a data set loader hands back before any scaling: the measured feature columns, the
// target, the grouping keys a natural split can use, and how many of the file's rows were
// dropped for a missing value. datasets.ts standardizes and appends the intercept.

import type { DatasetName } from '../scenario/dataset-choices.js';
import { DataError } from './data-error.js';

export interface DatasetTable {
  name: DatasetName;
  target: string;
  /** rows in the package's file, dropped ones included */
  fileRowCount: number;
  /** rows dropped because a value the features, target or keys need is missing */
  droppedRowCount: number;
  sampleCount: number;
  /** the measured columns, in feature order */
  featureNames: string[];
  /** sampleCount x featureNames.length, row-major */
  features: Float64Array;
  /** class index (softmax), 0 or 1 (logistic) or a real value (least squares) */
  targets: Float64Array;
  /** classifiers: label c names classNames[c]; least squares: empty */
  classNames: string[];
  /** natural keys: the value of each kept row, by key name */
  keys: Record<string, string[]>;
  /** whether a constant 1 column is appended after scaling (the model's intercept) */
  intercept: boolean;
}

/** Collects kept rows one at a time; a row with a missing value is only counted. */
export class TableRows {
  private readonly values: number[] = [];
  private readonly targetValues: number[] = [];
  private readonly keyValues: Record<string, string[]>;
  private dropped = 0;

  constructor(
    private readonly name: DatasetName,
    private readonly featureCount: number,
    keyNames: readonly string[],
  ) {
    this.keyValues = Object.fromEntries(keyNames.map((key) => [key, []]));
  }

  /** Keeps the row when every value is present (a finite number, a non-empty key). */
  add(
    features: readonly (number | null | undefined)[],
    target: number | null | undefined,
    keys: Record<string, string | null | undefined> = {},
  ): void {
    if (features.length !== this.featureCount) {
      throw new DataError(
        'E_DATASET',
        `${this.name}: a row of ${features.length} features, expected ${this.featureCount}`,
      );
    }
    const present = (v: number | null | undefined): v is number =>
      typeof v === 'number' && Number.isFinite(v);
    const keyNames = Object.keys(this.keyValues);
    if (
      !features.every(present) ||
      !present(target) ||
      !keyNames.every((key) => typeof keys[key] === 'string' && keys[key] !== '')
    ) {
      this.dropped++;
      return;
    }
    for (const value of features) this.values.push(value as number);
    this.targetValues.push(target);
    for (const key of keyNames) this.keyValues[key].push(keys[key] as string);
  }

  /** The table of kept rows; refuses a file with no usable row. */
  finish(
    fields: Pick<DatasetTable, 'target' | 'featureNames' | 'classNames' | 'intercept'>,
  ): DatasetTable {
    const sampleCount = this.targetValues.length;
    if (sampleCount === 0)
      throw new DataError('E_DATASET', `${this.name}: no row has every value present`);
    return {
      name: this.name,
      ...fields,
      fileRowCount: sampleCount + this.dropped,
      droppedRowCount: this.dropped,
      sampleCount,
      features: Float64Array.from(this.values),
      targets: Float64Array.from(this.targetValues),
      keys: this.keyValues,
    };
  }
}

/** Class indices in the order of the sorted class names, with the names. */
export function classIndices(names: readonly string[]): {
  classNames: string[];
  labelOf: Map<string, number>;
} {
  const classNames = [...new Set(names)].sort();
  return { classNames, labelOf: new Map(classNames.map((name, c) => [name, c])) };
}
