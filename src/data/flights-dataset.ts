// US domestic flights from the npm package vega-datasets (3.2.1, BSD-3-Clause), file
// data/flights-20k.json: 20,000 flights of January to March 2001 with date, delay (minutes),
// distance (miles), origin and destination airport. The package names its source as the U.S.
// Bureau of Transportation Statistics (on-time performance data reported under 14 CFR Part 234;
// licence terms not stated, listed by the package as "other-open").
//
// Features (our design):
//   distance             miles, as given
//   hour sine, cosine    sin and cos of 2 pi h / 24, h = hour + minute / 60 of the date field, so
//                        that 23:50 and 00:10 lie close together
//   monday .. saturday   day of week of the date as six 0/1 columns; Sunday is the reference
//                        (the intercept carries it)
// and the intercept, appended after scaling. The date field is read as the calendar date and
// clock time it writes ("2001/01/01 00:47"), with no time zone conversion.
// Targets: delay-minutes (least squares, in minutes, not scaled) or delayed-over-15-minutes
// (logistic: 1 when the delay is above 15 minutes). Natural keys: origin, destination airport.

import { z } from 'zod';
import { DataError } from './data-error.js';
import { TableRows, type DatasetTable } from './dataset-table.js';
import { readVegaRecords } from './vega-file.js';

export const FLIGHTS_FILE = 'flights-20k.json';
/** A flight counts as delayed when its delay is above this. */
export const FLIGHT_DELAYED_MINUTES = 15;

const flightRecord = z.object({
  date: z.string().nullable(),
  delay: z.number().nullable(),
  distance: z.number().nullable(),
  origin: z.string().nullable(),
  destination: z.string().nullable(),
});

const DATE_PATTERN = /^(\d{4})\/(\d{2})\/(\d{2}) (\d{2}):(\d{2})$/;
const WEEKDAY_COLUMNS = ['monday', 'tuesday', 'wednesday', 'thursday', 'friday', 'saturday'];

/** The date's features, or null when the date is absent; a present but malformed date is refused. */
function dateFeatures(date: string | null, row: number): number[] | null {
  if (date === null) return null;
  const parts = DATE_PATTERN.exec(date);
  if (parts === null)
    throw new DataError('E_DATASET', `flights: row ${row}: date "${date}" is not YYYY/MM/DD hh:mm`);
  const [year, month, day, hour, minute] = parts.slice(1).map(Number);
  const hourOfDay = hour + minute / 60;
  const angle = (2 * Math.PI * hourOfDay) / 24;
  // getUTCDay: 0 is Sunday, 1 Monday, ... 6 Saturday.
  const weekday = new Date(Date.UTC(year, month - 1, day)).getUTCDay();
  const weekdayColumns = WEEKDAY_COLUMNS.map((_, c) => (weekday === c + 1 ? 1 : 0));
  return [Math.sin(angle), Math.cos(angle), ...weekdayColumns];
}

export function loadFlightsTable(
  target: 'delay-minutes' | 'delayed-over-15-minutes',
): DatasetTable {
  const records = readVegaRecords(FLIGHTS_FILE, flightRecord);
  const featureNames = ['distance', 'hour sine', 'hour cosine', ...WEEKDAY_COLUMNS];
  const rows = new TableRows('flights', featureNames.length, ['origin', 'destination']);
  records.forEach((record, row) => {
    const date = dateFeatures(record.date, row);
    const delay = record.delay;
    const value =
      delay === null
        ? null
        : target === 'delay-minutes'
          ? delay
          : delay > FLIGHT_DELAYED_MINUTES
            ? 1
            : 0;
    const dateColumns = date ?? Array<null>(featureNames.length - 1).fill(null);
    rows.add([record.distance, ...dateColumns], value, {
      origin: record.origin,
      destination: record.destination,
    });
  });
  return rows.finish({
    target,
    featureNames,
    classNames: target === 'delay-minutes' ? [] : ['on time', 'delayed'],
    intercept: true,
  });
}
