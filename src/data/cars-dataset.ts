// Cars of 1970 to 1982 from the npm package vega-datasets (3.2.1, BSD-3-Clause), file
// data/cars.json: 406 car models with fuel economy, engine and body measurements, model year and
// origin (USA, Europe, Japan). The package names its source as the StatLib Datasets Archive
// (http://lib.stat.cmu.edu/datasets/), distributed in 1982 for educational and scientific purposes.
//
// Features: cylinders, displacement (cubic inches), horsepower, weight (lb), acceleration
// (seconds, 0 to 60 mph), model year; the intercept is appended after scaling. Target:
// miles-per-gallon (least squares, not scaled). Natural key: origin, so each region's makers are
// one client: fuel economy and engine sizes differ by region (covariate and concept shift). A row
// missing a value (fuel economy or horsepower, 14 in 3.2.1) is counted and dropped.

import { z } from 'zod';
import { DataError } from './data-error.js';
import { TableRows, type DatasetTable } from './dataset-table.js';
import { readVegaRecords } from './vega-file.js';

export const CARS_FILE = 'cars.json';

const carRecord = z.object({
  Miles_per_Gallon: z.number().nullable(),
  Cylinders: z.number().nullable(),
  Displacement: z.number().nullable(),
  Horsepower: z.number().nullable(),
  Weight_in_lbs: z.number().nullable(),
  Acceleration: z.number().nullable(),
  Year: z.string().nullable(),
  Origin: z.string().nullable(),
});

const YEAR_PATTERN = /^(\d{4})-\d{2}-\d{2}$/;

function modelYear(year: string | null, row: number): number | null {
  if (year === null) return null;
  const parts = YEAR_PATTERN.exec(year);
  if (parts === null)
    throw new DataError('E_DATASET', `cars: row ${row}: Year "${year}" is not YYYY-MM-DD`);
  return Number(parts[1]);
}

export function loadCarsTable(): DatasetTable {
  const records = readVegaRecords(CARS_FILE, carRecord);
  const featureNames = [
    'cylinders',
    'displacement',
    'horsepower',
    'weight',
    'acceleration',
    'model year',
  ];
  const rows = new TableRows('cars', featureNames.length, ['origin']);
  records.forEach((record, row) => {
    rows.add(
      [
        record.Cylinders,
        record.Displacement,
        record.Horsepower,
        record.Weight_in_lbs,
        record.Acceleration,
        modelYear(record.Year, row),
      ],
      record.Miles_per_Gallon,
      { origin: record.Origin },
    );
  });
  return rows.finish({ target: 'miles-per-gallon', featureNames, classNames: [], intercept: true });
}
