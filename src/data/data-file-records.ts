// A data file's rows as cells under named columns, each row with the line it starts on, before
// any meaning is given to a column. CSV goes through csv-parse (a header line of names, then one
// record a line, quoted fields may span lines); JSONL is one JSON object a line, whose first
// line's keys are the columns. An empty cell (CSV) or a null, absent or empty value (JSONL) is
// null: a missing value, which the table decides about (data-file-table.ts).

import { parse } from 'csv-parse/sync';
import { dataFileError } from './data-file-error.js';

export type DataFileFormat = 'csv' | 'jsonl';

/** A cell as the file gives it; null when it is missing. */
export type Cell = string | number | boolean | null;

export interface DataFileRow {
  /** 1-based line of the file the row starts on */
  line: number;
  /** one per column, in column order */
  cells: Cell[];
}

export interface DataFileRecords {
  file: string;
  /** 1-based line of the column names (CSV: the header; JSONL: the first object) */
  headerLine: number;
  columns: string[];
  rows: DataFileRow[];
}

function checkColumnNames(file: string, line: number, columns: readonly string[]): void {
  if (columns.length === 0) throw dataFileError({ file, line }, 'the header names no column');
  columns.forEach((name, c) => {
    if (name === '')
      throw dataFileError({ file, line, column: { number: c + 1 } }, 'a column without a name');
    if (columns.indexOf(name) !== c)
      throw dataFileError(
        { file, line, column: { number: c + 1, name } },
        `the column name is also column ${columns.indexOf(name) + 1}'s`,
      );
  });
}

interface CsvParseFailure {
  code?: string;
  message: string;
  lines?: number;
}

/** Newlines inside a record's quoted fields: the record starts that many lines before it ends. */
function newlinesIn(fields: readonly string[]): number {
  let count = 0;
  for (const field of fields) for (const ch of field) if (ch === '\n') count++;
  return count;
}

export function readCsvRecords(file: string, text: string): DataFileRecords {
  let parsed: { record: string[]; info: { lines: number } }[];
  try {
    parsed = parse(text, {
      bom: true,
      info: true,
      trim: true,
      skip_empty_lines: true,
      // Row lengths are checked below, to name the row's line and the header's length.
      relax_column_count: true,
    }) as unknown as { record: string[]; info: { lines: number } }[];
  } catch (error) {
    const failure = error as CsvParseFailure;
    throw dataFileError(
      failure.lines === undefined ? { file } : { file, line: failure.lines },
      `not CSV (${failure.code ?? 'parse error'}: ${failure.message})`,
    );
  }
  if (parsed.length === 0) throw dataFileError({ file }, 'the file is empty');
  const startLine = (entry: (typeof parsed)[number]): number =>
    entry.info.lines - newlinesIn(entry.record);
  const header = parsed[0];
  const columns = header.record;
  checkColumnNames(file, startLine(header), columns);
  const rows = parsed.slice(1).map((entry): DataFileRow => {
    const line = startLine(entry);
    const fields = entry.record;
    if (fields.length !== columns.length) {
      const column =
        fields.length < columns.length
          ? { number: fields.length + 1, name: columns[fields.length] }
          : { number: columns.length + 1 };
      throw dataFileError(
        { file, line, column },
        `a ragged row: ${fields.length} fields, the header has ${columns.length} columns`,
      );
    }
    return { line, cells: fields.map((field) => (field === '' ? null : field)) };
  });
  return { file, headerLine: startLine(header), columns, rows };
}

/** The 1-based column of a JSON.parse failure on `line`, as far as its message tells it. */
function jsonErrorColumn(message: string, line: string): number {
  const position = /at position (\d+)/.exec(message);
  if (position !== null) return Number(position[1]) + 1;
  const token = /Unexpected token '(.)'/.exec(message);
  if (token !== null && line.includes(token[1])) return line.indexOf(token[1]) + 1;
  return line.length + 1;
}

function jsonCell(value: unknown): Cell | undefined {
  if (value === null || value === undefined || value === '') return null;
  if (typeof value === 'string' || typeof value === 'number' || typeof value === 'boolean')
    return value;
  return undefined;
}

export function readJsonlRecords(file: string, text: string): DataFileRecords {
  const lines = text.replace(/^\uFEFF/, '').split('\n');
  let columns: string[] | null = null;
  let headerLine = 0;
  const rows: DataFileRow[] = [];
  lines.forEach((raw, index) => {
    const lineText = raw.endsWith('\r') ? raw.slice(0, -1) : raw;
    if (lineText.trim() === '') return;
    const line = index + 1;
    let value: unknown;
    try {
      value = JSON.parse(lineText);
    } catch (error) {
      const message = (error as Error).message;
      throw dataFileError(
        { file, line, column: { number: jsonErrorColumn(message, lineText) } },
        `bad JSON (${message})`,
      );
    }
    if (value === null || typeof value !== 'object' || Array.isArray(value))
      throw dataFileError({ file, line }, 'expected a JSON object on the line');
    const record = value as Record<string, unknown>;
    if (columns === null) {
      columns = Object.keys(record);
      headerLine = line;
      checkColumnNames(file, line, columns);
    }
    const cells = columns.map((name, c) => {
      const cell = jsonCell(record[name]);
      if (cell === undefined)
        throw dataFileError(
          { file, line, column: { number: c + 1, name } },
          'a nested object or list, where a value was expected',
        );
      return cell;
    });
    rows.push({ line, cells });
  });
  if (columns === null) throw dataFileError({ file }, 'the file is empty');
  return { file, headerLine, columns, rows };
}

export function readDataFileRecords(
  file: string,
  text: string,
  format: DataFileFormat,
): DataFileRecords {
  return format === 'csv' ? readCsvRecords(file, text) : readJsonlRecords(file, text);
}
