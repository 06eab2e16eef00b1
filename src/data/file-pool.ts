// A file scenario's pool: the user's data file, read by the process that needs it (raw data
// never crosses the wire), checked against the SHA-256 the plan carries, given meaning by the
// scenario (data-file-table.ts), its numeric features standardized over the training rows, and
// the intercept column of ones appended after scaling.

import { createHash } from 'node:crypto';
import { closeSync, fstatSync, openSync, readFileSync } from 'node:fs';
import type { Scenario } from '../scenario/schema.js';
import { DATA_FILE_LIMITS } from '../scenario/schema.js';
import { canonicalJson } from '../scenario/plan-hash.js';
import { dataFileError } from './data-file-error.js';
import { readDataFileRecords } from './data-file-records.js';
import { dataFileTable, type DataFileTable } from './data-file-table.js';
import type { DatasetPool } from './dataset-pool.js';
import { DataError } from './data-error.js';
import { INTERCEPT_FEATURE, standardizeOverRows } from './datasets.js';

export type FileData = Extract<Scenario['data'], { source: 'file' }>;

/** Tables kept at once (a process normally needs one plan's). */
const TABLE_CACHE_ENTRIES_MAX = 4;
const tableCache = new Map<string, DataFileTable>();

export function fileDataOf(scenario: Scenario): FileData {
  const data = scenario.data;
  if (data.source !== 'file')
    throw new DataError('E_DATA_SPEC', 'not a file scenario', 'data.source');
  return data;
}

/** The file's bytes, bounded by DATA_FILE_LIMITS.bytesMax; E_DATA_FILE when unreadable. */
function readBounded(file: string): Buffer {
  let fd: number;
  try {
    fd = openSync(file, 'r');
  } catch (error) {
    throw dataFileError(
      { file },
      `cannot read the data file (${(error as NodeJS.ErrnoException).code ?? (error as Error).message})`,
    );
  }
  try {
    const size = fstatSync(fd).size;
    if (size > DATA_FILE_LIMITS.bytesMax)
      throw dataFileError(
        { file },
        `${size} bytes, above the limit of ${DATA_FILE_LIMITS.bytesMax}`,
      );
    return readFileSync(fd);
  } finally {
    closeSync(fd);
  }
}

function sha256Of(bytes: Uint8Array): string {
  return createHash('sha256').update(bytes).digest('hex');
}

/** Why this process's copy of the file is not the plan's (named, with both hashes), or null. */
export function dataFileCopyProblem(data: FileData): string | null {
  if (data.sha256 === undefined) return null;
  let bytes: Buffer;
  try {
    bytes = readBounded(data.path);
  } catch (error) {
    return (error as Error).message;
  }
  const sha256 = sha256Of(bytes);
  return sha256 === data.sha256
    ? null
    : `${data.path}: this copy has SHA-256 ${sha256}, the plan's has ${data.sha256}`;
}

function fileTable(scenario: Scenario): DataFileTable {
  const data = fileDataOf(scenario);
  const labelled = scenario.problem.kind !== 'least-squares';
  const key = canonicalJson({ data, labelled });
  const cached = tableCache.get(key);
  if (cached !== undefined) return cached;
  const bytes = readBounded(data.path);
  if (data.sha256 !== undefined) {
    const sha256 = sha256Of(bytes);
    if (sha256 !== data.sha256)
      throw dataFileError(
        { file: data.path },
        `this copy has SHA-256 ${sha256}, the plan's has ${data.sha256}`,
      );
  }
  const records = readDataFileRecords(data.path, bytes.toString('utf8'), data.format);
  const table = dataFileTable(records, {
    target: data.target,
    features: data.features,
    categorical: data.categorical,
    key: data.partition.kind === 'natural' ? data.partition.key : null,
    missing: data.missing,
    targetKind: labelled ? 'label' : 'real',
  });
  if (tableCache.size >= TABLE_CACHE_ENTRIES_MAX)
    tableCache.delete(tableCache.keys().next().value as string);
  tableCache.set(key, table);
  return table;
}

function checkProblemFits(scenario: Scenario, table: DataFileTable, data: FileData): void {
  const { problem } = scenario;
  const labels = table.classNames;
  const shown = labels.length > 10 ? `${labels.slice(0, 10).join(', ')}, ...` : labels.join(', ');
  const expected =
    problem.kind === 'logistic'
      ? 2
      : problem.kind === 'softmax' || problem.kind === 'perceptron'
        ? problem.classes
        : null;
  if (expected !== null && labels.length !== expected)
    throw dataFileError(
      { file: table.file },
      `the target "${data.target}" has ${labels.length} labels (${shown}); problem.kind "${problem.kind}" ${problem.kind === 'logistic' ? 'needs 2' : `has problem.classes ${expected}`}`,
    );
}

/** The scaled table as the problem uses it: feature names (intercept last), rows, counts. */
export interface FileDataset {
  table: DataFileTable;
  featureCount: number;
  featureNames: string[];
  features: Float64Array;
  /** numeric columns left for build-shard.ts to scale over the training rows */
  columnsToStandardize: readonly number[];
}

function allRows(count: number): Uint32Array {
  return Uint32Array.from({ length: count }, (_, s) => s);
}

export function fileDataset(scenario: Scenario): FileDataset {
  const data = fileDataOf(scenario);
  const table = fileTable(scenario);
  checkProblemFits(scenario, table, data);
  const measured = table.featureNames.length;
  const width = measured + 1;
  const features = new Float64Array(table.sampleCount * width);
  for (let s = 0; s < table.sampleCount; s++) {
    features.set(table.features.subarray(s * measured, s * measured + measured), s * width);
    features[s * width + measured] = 1;
  }
  const numericColumns = data.standardize
    ? table.numeric.flatMap((isNumeric, j) => (isNumeric ? [j] : []))
    : [];
  // Nothing held out: every row trains, so the whole table gives the statistics now. Otherwise
  // build-shard.ts scales once the test parts are drawn, over the training rows only.
  if (data.testFraction === 0 && numericColumns.length > 0)
    standardizeOverRows(features, width, numericColumns, allRows(table.sampleCount));
  return {
    table,
    featureCount: width,
    featureNames: [...table.featureNames, INTERCEPT_FEATURE],
    features,
    columnsToStandardize: data.testFraction === 0 ? [] : numericColumns,
  };
}

/** The file's size and keys, for estimates before a run (the table is cached for the run). */
export function fileDataShape(scenario: Scenario): {
  sampleCount: number;
  featureCount: number;
  keys: readonly string[] | undefined;
  droppedRowCount: number;
} {
  const table = fileTable(scenario);
  return {
    sampleCount: table.sampleCount,
    droppedRowCount: table.droppedRowCount,
    featureCount: table.featureNames.length + 1,
    keys: table.keys,
  };
}

export function filePool(scenario: Scenario): DatasetPool {
  const dataset = fileDataset(scenario);
  const { targets, keys } = dataset.table;
  return {
    featureCount: dataset.featureCount,
    pool: { features: dataset.features, targets, labels: targets, keys },
    columnsToStandardize: dataset.columnsToStandardize,
  };
}
