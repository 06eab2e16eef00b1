// Reads one JSON file of the vega-datasets package (an array of records) and checks every
// record's shape with a zod schema, so that a loader works on typed values. A field that may be
// missing in the data is nullable in the schema; the loader counts and drops such rows.

import { z } from 'zod';
import { DataError } from './data-error.js';
import { readPackageJson } from './package-files.js';

export const VEGA_DATASETS_PACKAGE = 'vega-datasets';

export function readVegaRecords<T extends z.ZodType>(file: string, recordSchema: T): z.output<T>[] {
  const parsed = z
    .array(recordSchema)
    .safeParse(readPackageJson(VEGA_DATASETS_PACKAGE, `data/${file}`));
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    throw new DataError(
      'E_DATASET',
      `${VEGA_DATASETS_PACKAGE} data/${file}: record ${issue.path.map(String).join('.')}: ${issue.message}`,
    );
  }
  return parsed.data;
}
