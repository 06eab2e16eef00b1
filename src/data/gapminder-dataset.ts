// Countries from the npm package vega-datasets (3.2.1, BSD-3-Clause), file data/gapminder.json:
// life expectancy, fertility and population of 62 countries from 1955 to 2005 in 5-year steps.
// The package names its source as the Gapminder Foundation (data under Creative Commons
// Attribution 4.0 International, https://www.gapminder.org/free-material/).
//
// Features: fertility (children per woman), year, and the natural logarithm of the population
// (which spans five orders of magnitude); the intercept is appended after scaling. Target:
// life-expectancy-years (least squares, in years, not scaled). Natural keys: country, and region
// (the package's six-way "cluster" column, named by the labels its datapackage.json gives).

import { z } from 'zod';
import { DataError } from './data-error.js';
import { TableRows, type DatasetTable } from './dataset-table.js';
import { readVegaRecords } from './vega-file.js';

export const GAPMINDER_FILE = 'gapminder.json';

/** The cluster codes' labels, as vega-datasets' datapackage.json lists them for gapminder.json. */
export const GAPMINDER_REGIONS = [
  'south_asia',
  'europe_central_asia',
  'sub_saharan_africa',
  'america',
  'east_asia_pacific',
  'middle_east_north_africa',
];

const gapminderRecord = z.object({
  year: z.number().nullable(),
  country: z.string().nullable(),
  cluster: z.number().nullable(),
  pop: z.number().nullable(),
  life_expect: z.number().nullable(),
  fertility: z.number().nullable(),
});

function regionOf(cluster: number | null, row: number): string | null {
  if (cluster === null) return null;
  const region = GAPMINDER_REGIONS[cluster];
  if (region === undefined)
    throw new DataError('E_DATASET', `gapminder: row ${row}: cluster ${cluster} has no label`);
  return region;
}

export function loadGapminderTable(): DatasetTable {
  const records = readVegaRecords(GAPMINDER_FILE, gapminderRecord);
  const featureNames = ['fertility', 'year', 'log population'];
  const rows = new TableRows('gapminder', featureNames.length, ['country', 'region']);
  records.forEach((record, row) => {
    const logPopulation = record.pop !== null && record.pop > 0 ? Math.log(record.pop) : null;
    rows.add([record.fertility, record.year, logPopulation], record.life_expect, {
      country: record.country,
      region: regionOf(record.cluster, row),
    });
  });
  return rows.finish({
    target: 'life-expectancy-years',
    featureNames,
    classNames: [],
    intercept: true,
  });
}
