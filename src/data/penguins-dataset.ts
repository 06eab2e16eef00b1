// Palmer Archipelago penguins from the npm package vega-datasets (3.2.1, BSD-3-Clause), file
// data/penguins.json: 344 penguins of three species on three islands. The package names its
// sources as Palmer Station Antarctica LTER (collected by Dr. Kristen Gorman) and Allison
// Horst's palmerpenguins repository (CC0 1.0 Universal).
//
// Features: beak length (mm), beak depth (mm), flipper length (mm), body mass (g); the intercept
// is appended after scaling. Sex is not a feature (it is missing for more penguins than the
// measurements are). Target: species (softmax; Adelie, Chinstrap, Gentoo in sorted order).
// Natural key: island. A row missing a measurement is counted and dropped (two in 3.2.1).

import { z } from 'zod';
import { DataError } from './data-error.js';
import { classIndices, TableRows, type DatasetTable } from './dataset-table.js';
import { readVegaRecords } from './vega-file.js';

export const PENGUINS_FILE = 'penguins.json';

export const PENGUIN_MEASUREMENTS = [
  'Beak Length (mm)',
  'Beak Depth (mm)',
  'Flipper Length (mm)',
  'Body Mass (g)',
] as const;

const penguinRecord = z.object({
  Species: z.string(),
  Island: z.string().nullable(),
  'Beak Length (mm)': z.number().nullable(),
  'Beak Depth (mm)': z.number().nullable(),
  'Flipper Length (mm)': z.number().nullable(),
  'Body Mass (g)': z.number().nullable(),
});

export function loadPenguinsTable(): DatasetTable {
  const records = readVegaRecords(PENGUINS_FILE, penguinRecord);
  const { classNames, labelOf } = classIndices(records.map((r) => r.Species));
  if (classNames.length !== 3)
    throw new DataError('E_DATASET', `penguins: ${classNames.length} species, expected 3`);
  const rows = new TableRows('penguins', PENGUIN_MEASUREMENTS.length, ['island']);
  for (const record of records) {
    rows.add(
      PENGUIN_MEASUREMENTS.map((column) => record[column]),
      labelOf.get(record.Species),
      { island: record.Island },
    );
  }
  return rows.finish({
    target: 'species',
    featureNames: [...PENGUIN_MEASUREMENTS],
    classNames,
    intercept: true,
  });
}
