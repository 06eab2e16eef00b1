// Errors in a data file of the user's own: the place (file, line, column) comes first, so that
// an editor or a person goes straight to it. Code E_DATA_FILE, an input error (exit code 2).

import { DataError } from './data-error.js';

export interface DataFilePlace {
  file: string;
  /** 1-based; absent when the whole file is at fault */
  line?: number;
  /** 1-based column number, and its name when the file has one */
  column?: { number: number; name?: string };
}

function placeText({ file, line, column }: DataFilePlace): string {
  let text = file;
  if (line !== undefined) text += `, line ${line}`;
  if (column !== undefined)
    text += `, column ${column.number}${column.name === undefined ? '' : ` ("${column.name}")`}`;
  return text;
}

export function dataFileError(place: DataFilePlace, reason: string): DataError {
  return new DataError('E_DATA_FILE', `${placeText(place)}: ${reason}`, 'data.path');
}
