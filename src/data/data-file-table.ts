// A data file's rows given meaning by its scenario: the target (a number, or a class label
// numbered in sorted order), the feature columns (numbers, or categories one-hot encoded with
// their values in sorted order, so that the encoding does not depend on row order), and the key
// whose values become clients. A row with a missing feature or target is refused or dropped and
// counted, as the scenario says; a row without a key is always refused, since it belongs to no
// client. Scaling and the intercept come after (file-pool.ts), over the training rows.

import { DATA_FILE_LIMITS } from '../scenario/schema.js';
import { dataFileError } from './data-file-error.js';
import type { Cell, DataFileRecords, DataFileRow } from './data-file-records.js';

export interface DataFileColumns {
  target: string;
  features: string[] | { allBut: string[] };
  categorical: string[];
  /** the natural split's column, or null */
  key: string | null;
  missing: 'refuse' | 'drop';
  /** real: least squares; label: a classifier's class */
  targetKind: 'real' | 'label';
}

export interface DataFileTable {
  file: string;
  /** rows in the file, dropped ones included */
  fileRowCount: number;
  /** rows dropped for a missing feature or target (missing: drop) */
  droppedRowCount: number;
  sampleCount: number;
  /** one per feature column; a categorical column's are "column=value" */
  featureNames: string[];
  /** per feature column: true for a number, false for a category's 0/1 column */
  numeric: boolean[];
  /** sampleCount x featureNames.length, row-major */
  features: Float64Array;
  /** a real value, or the class index into classNames */
  targets: Float64Array;
  /** label targets: the labels in sorted order; real targets: empty */
  classNames: string[];
  /** the key's value of every kept row, or undefined without a key */
  keys: string[] | undefined;
  /** the 1-based file line of every kept row */
  lines: Uint32Array;
}

const NUMBER_PATTERN = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/** A cell as a finite number, or null when it is not one. */
function numberOf(cell: Exclude<Cell, null>): number | null {
  if (typeof cell === 'number') return Number.isFinite(cell) ? cell : null;
  if (typeof cell !== 'string' || !NUMBER_PATTERN.test(cell)) return null;
  const value = Number(cell);
  return Number.isFinite(value) ? value : null;
}

function sortedDistinct(values: Iterable<string>): string[] {
  return [...new Set(values)].sort();
}

class ColumnFinder {
  constructor(private readonly records: DataFileRecords) {}

  indexOf(name: string, field: string): number {
    const c = this.records.columns.indexOf(name);
    if (c < 0)
      throw dataFileError(
        { file: this.records.file, line: this.records.headerLine },
        `no column "${name}" (${field}); the columns are ${this.records.columns.join(', ')}`,
      );
    return c;
  }
}

function featureColumnNames(records: DataFileRecords, spec: DataFileColumns): string[] {
  if (Array.isArray(spec.features)) return spec.features;
  const excluded = new Set([...spec.features.allBut, spec.target]);
  if (spec.key !== null) excluded.add(spec.key);
  const features = records.columns.filter((name) => !excluded.has(name));
  if (features.length === 0)
    throw dataFileError(
      { file: records.file, line: records.headerLine },
      `data.features.allBut leaves no feature column; the columns are ${records.columns.join(', ')}`,
    );
  return features;
}

interface KeptRow {
  line: number;
  /** a number per numeric feature, a category per categorical one */
  values: (number | string)[];
  target: number | string;
  key: string | null;
}

/** The table of `records` as `spec` reads them; throws E_DATA_FILE naming file, line and column. */
export function dataFileTable(records: DataFileRecords, spec: DataFileColumns): DataFileTable {
  const { file, columns } = records;
  const finder = new ColumnFinder(records);
  const targetColumn = finder.indexOf(spec.target, 'data.target');
  const keyColumn = spec.key === null ? -1 : finder.indexOf(spec.key, 'data.partition.key');
  if (!Array.isArray(spec.features))
    for (const name of spec.features.allBut) finder.indexOf(name, 'data.features.allBut');
  const featureNames = featureColumnNames(records, spec);
  const featureColumns = featureNames.map((name) => finder.indexOf(name, 'data.features'));
  const categorical = featureNames.map((name) => spec.categorical.includes(name));

  const place = (row: DataFileRow, c: number) => ({
    file,
    line: row.line,
    column: { number: c + 1, name: columns[c] },
  });
  const numberAt = (row: DataFileRow, c: number, cell: Exclude<Cell, null>, what: string) => {
    const value = numberOf(cell);
    if (value === null)
      throw dataFileError(
        place(row, c),
        `${JSON.stringify(cell)} is not a number (${what}${what === 'a feature' ? `; list the column in data.categorical if it holds categories` : ''})`,
      );
    return value;
  };

  const kept: KeptRow[] = [];
  let dropped = 0;
  for (const row of records.rows) {
    let key: string | null = null;
    if (keyColumn >= 0) {
      const cell = row.cells[keyColumn];
      if (cell === null)
        throw dataFileError(place(row, keyColumn), 'an empty key: every row must name its client');
      key = String(cell);
    }
    const needed = [targetColumn, ...featureColumns];
    const missingAt = needed.find((c) => row.cells[c] === null);
    if (missingAt !== undefined) {
      if (spec.missing === 'refuse')
        throw dataFileError(
          place(row, missingAt),
          'a missing value (data.missing is "refuse"; "drop" drops and counts such rows)',
        );
      dropped++;
      continue;
    }
    const targetCell = row.cells[targetColumn] as Exclude<Cell, null>;
    const target =
      spec.targetKind === 'real'
        ? numberAt(row, targetColumn, targetCell, 'a least-squares target')
        : String(targetCell);
    const values = featureColumns.map((c, f) => {
      const cell = row.cells[c] as Exclude<Cell, null>;
      return categorical[f] ? String(cell) : numberAt(row, c, cell, 'a feature');
    });
    kept.push({ line: row.line, values, target, key });
  }
  if (kept.length === 0)
    throw dataFileError(
      { file },
      records.rows.length === 0 ? 'no rows after the header' : 'every row misses a value',
    );

  const levels = featureColumns.map((c, f) => {
    if (!categorical[f]) return [];
    const values = sortedDistinct(kept.map((row) => row.values[f] as string));
    if (values.length > DATA_FILE_LIMITS.levelsMax)
      throw dataFileError(
        { file, line: records.headerLine, column: { number: c + 1, name: columns[c] } },
        `${values.length} distinct values, above the limit of ${DATA_FILE_LIMITS.levelsMax} for a categorical column`,
      );
    return values;
  });
  const expandedNames: string[] = [];
  const numeric: boolean[] = [];
  featureNames.forEach((name, f) => {
    if (!categorical[f]) {
      expandedNames.push(name);
      numeric.push(true);
      return;
    }
    for (const level of levels[f]) {
      expandedNames.push(`${name}=${level}`);
      numeric.push(false);
    }
  });

  const width = expandedNames.length;
  const classNames =
    spec.targetKind === 'label' ? sortedDistinct(kept.map((row) => row.target as string)) : [];
  const classOf = new Map(classNames.map((name, c) => [name, c]));
  const levelOf = levels.map((values) => new Map(values.map((value, l) => [value, l])));
  const features = new Float64Array(kept.length * width);
  const targets = new Float64Array(kept.length);
  const lines = new Uint32Array(kept.length);
  kept.forEach((row, s) => {
    let j = s * width;
    row.values.forEach((value, f) => {
      if (!categorical[f]) {
        features[j++] = value as number;
        return;
      }
      features[j + (levelOf[f].get(value as string) as number)] = 1;
      j += levels[f].length;
    });
    targets[s] =
      spec.targetKind === 'real'
        ? (row.target as number)
        : (classOf.get(row.target as string) as number);
    lines[s] = row.line;
  });
  return {
    file,
    fileRowCount: records.rows.length,
    droppedRowCount: dropped,
    sampleCount: kept.length,
    featureNames: expandedNames,
    numeric,
    features,
    targets,
    classNames,
    keys: keyColumn >= 0 ? kept.map((row) => row.key as string) : undefined,
    lines,
  };
}
