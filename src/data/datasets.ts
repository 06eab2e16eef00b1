// Data sets shipped by installed packages (one loader per file, *-dataset.ts, each naming its
// package, licence and origin): iris, digits, flights, gapminder, penguins, cars. This file picks
// the loader, keeps one parsed copy per (data set, target), and hands out scaled copies: the
// measured columns standardized over the whole data set when asked, then, where the data set has
// one, the intercept column of ones appended (after scaling, which would zero a constant column).

import {
  datasetChoice,
  type DatasetName,
  type DatasetProblemKind,
} from '../scenario/dataset-choices.js';
import { DataError } from './data-error.js';
import type { DatasetTable } from './dataset-table.js';
import { loadCarsTable } from './cars-dataset.js';
import { loadDigitsTable } from './digits-dataset.js';
import { loadFlightsTable } from './flights-dataset.js';
import { loadGapminderTable } from './gapminder-dataset.js';
import { loadIrisTable } from './iris-dataset.js';
import { loadPenguinsTable } from './penguins-dataset.js';

export type { DatasetName };

export const INTERCEPT_FEATURE = 'intercept';

export interface LabelledDataset {
  name: DatasetName;
  target: string;
  /** the problem kind the target needs */
  kind: DatasetProblemKind;
  sampleCount: number;
  featureCount: number;
  /** one per column; the intercept, when there is one, is last */
  featureNames: string[];
  /** sampleCount x featureCount, row-major */
  features: Float64Array;
  /** class index (softmax), 0 or 1 (logistic) or a real value (least squares) */
  targets: Float64Array;
  /** classifiers: label c names classNames[c]; least squares: empty */
  classNames: string[];
  /** natural keys: the value of each sample, by key name (the data set's naturalKeys) */
  keys: Record<string, string[]>;
  /** rows of the package's file, and those dropped for a missing value */
  fileRowCount: number;
  droppedRowCount: number;
}

export interface DatasetOptions {
  /** the data set's target; absent: its first */
  target?: string;
  /** scale every measured feature to zero mean and unit variance over the whole data set */
  standardize: boolean;
}

/** Parsed tables kept at once: every (data set, target) pair fits. */
const TABLE_CACHE_ENTRIES_MAX = 8;
const tableCache = new Map<string, DatasetTable>();

/**
 * In place: each of the first `columnCount` columns minus its mean, divided by its population
 * standard deviation (divide by n, so that the scaled column has variance exactly 1 over these
 * samples). A constant column is only centred. Rows are featureCount wide. With `statisticRows`
 * (ascending row indices: the training rows) the mean and deviation come from those rows alone
 * and every row is scaled by them, so that held-out rows never inform the scaling.
 */
export function standardizeColumns(
  features: Float64Array,
  sampleCount: number,
  featureCount: number,
  columnCount = featureCount,
  statisticRows?: Uint32Array,
): void {
  const rows = statisticRows ?? Uint32Array.from({ length: sampleCount }, (_, s) => s);
  const columns = Array.from({ length: columnCount }, (_, j) => j);
  standardizeOverRows(features, featureCount, columns, rows);
}

/**
 * In place, on every row: each column of `columns` minus its mean over `rows`, divided by its
 * population standard deviation over `rows` (a constant column is only centred). The statistics
 * come from the training rows, so a held-out row never informs the scaling it is scored under.
 */
export function standardizeOverRows(
  features: Float64Array,
  width: number,
  columns: readonly number[],
  rows: Uint32Array,
): void {
  const sampleCount = features.length / width;
  const n = rows.length;
  for (const j of columns) {
    let sum = 0;
    for (let k = 0; k < n; k++) sum += features[rows[k] * width + j];
    const mean = sum / n;
    let squares = 0;
    for (let k = 0; k < n; k++) squares += (features[rows[k] * width + j] - mean) ** 2;
    const deviation = Math.sqrt(squares / n);
    const divisor = deviation > 0 ? deviation : 1;
    for (let s = 0; s < sampleCount; s++)
      features[s * width + j] = (features[s * width + j] - mean) / divisor;
  }
}

function readTable(name: DatasetName, target: string): DatasetTable {
  switch (name) {
    case 'iris':
      return loadIrisTable();
    case 'digits':
      return loadDigitsTable();
    case 'flights':
      return loadFlightsTable(target as 'delay-minutes' | 'delayed-over-15-minutes');
    case 'gapminder':
      return loadGapminderTable();
    case 'penguins':
      return loadPenguinsTable();
    case 'cars':
      return loadCarsTable();
  }
}

function cachedTable(name: DatasetName, target: string): DatasetTable {
  const key = `${name}\u0000${target}`;
  const cached = tableCache.get(key);
  if (cached !== undefined) return cached;
  const table = readTable(name, target);
  if (tableCache.size >= TABLE_CACHE_ENTRIES_MAX)
    tableCache.delete(tableCache.keys().next().value as string);
  tableCache.set(key, table);
  return table;
}

/** A copy of the measured columns, then, when `intercept`, a column of ones. */
function featureMatrix(table: DatasetTable): Float64Array {
  const measured = table.featureNames.length;
  if (!table.intercept) return table.features.slice();
  const width = measured + 1;
  const out = new Float64Array(table.sampleCount * width);
  for (let s = 0; s < table.sampleCount; s++) {
    out.set(table.features.subarray(s * measured, s * measured + measured), s * width);
    out[s * width + measured] = 1;
  }
  return out;
}

export interface DatasetShape {
  sampleCount: number;
  featureCount: number;
  /** natural keys by name; shared with the cache: read only */
  keys: Readonly<Record<string, readonly string[]>>;
}

function resolvedTarget(
  name: DatasetName,
  target: string | undefined,
): {
  target: string;
  kind: DatasetProblemKind;
} {
  const choice = datasetChoice(name) as ReturnType<typeof datasetChoice> | undefined;
  if (choice === undefined)
    throw new DataError('E_DATASET', `unknown data set "${String(name)}"`, 'data.name');
  const resolved = target ?? Object.keys(choice.targets)[0];
  const targetChoice = choice.targets[resolved];
  if (targetChoice === undefined) {
    throw new DataError(
      'E_DATA_SPEC',
      `data set ${name} has the targets ${Object.keys(choice.targets).join(', ')}; got "${resolved}"`,
      'data.target',
    );
  }
  return { target: resolved, kind: targetChoice.kind };
}

/** The data set's size and keys without a copy of its features (for estimates before a run). */
export function datasetShape(name: DatasetName, target?: string): DatasetShape {
  const table = cachedTable(name, resolvedTarget(name, target).target);
  return {
    sampleCount: table.sampleCount,
    featureCount: table.featureNames.length + (table.intercept ? 1 : 0),
    keys: table.keys,
  };
}

/** A fresh copy of the named data set (the caller may modify it). */
export function loadDataset(name: DatasetName, options: DatasetOptions): LabelledDataset {
  const { target, kind } = resolvedTarget(name, options.target);
  const table = cachedTable(name, target);
  const measured = table.featureNames.length;
  const featureCount = measured + (table.intercept ? 1 : 0);
  const features = featureMatrix(table);
  if (options.standardize) standardizeColumns(features, table.sampleCount, featureCount, measured);
  return {
    name,
    target,
    kind,
    sampleCount: table.sampleCount,
    featureCount,
    featureNames: table.intercept
      ? [...table.featureNames, INTERCEPT_FEATURE]
      : [...table.featureNames],
    features,
    targets: table.targets.slice(),
    classNames: [...table.classNames],
    keys: Object.fromEntries(Object.entries(table.keys).map(([key, values]) => [key, [...values]])),
    fileRowCount: table.fileRowCount,
    droppedRowCount: table.droppedRowCount,
  };
}
