import { describe, expect, it } from 'vitest';
import { loadDataset } from '../../src/data/datasets.js';
import { buildAllShards, buildShard } from '../../src/data/build-shard.js';
import { naturalKeyOrder } from '../../src/data/partition.js';
import { rawVegaRecords } from './package-data-files.js';
import { scenarioWith } from './scenario-fixture.js';

const present = (v: unknown): boolean => typeof v === 'number' && Number.isFinite(v);

describe('flights', () => {
  const raw = rawVegaRecords('flights-20k.json');

  it('holds the 20,000 flights the package documents, with 220 origin airports counted from the file', () => {
    // vega-datasets 3.2.1 datapackage.json: "Flight delay statistics (20,000 rows)".
    expect(raw.length).toBe(20_000);
    const flights = loadDataset('flights', { target: 'delay-minutes', standardize: false });
    expect(flights.sampleCount).toBe(20_000);
    expect(flights.droppedRowCount).toBe(0);
    expect(flights.featureNames).toEqual([
      'distance',
      'hour sine',
      'hour cosine',
      'monday',
      'tuesday',
      'wednesday',
      'thursday',
      'friday',
      'saturday',
      'intercept',
    ]);
    expect(new Set(flights.keys.origin).size).toBe(new Set(raw.map((r) => r.origin)).size);
    expect(new Set(flights.keys.origin).size).toBe(220);
    expect(Array.from(flights.targets)).toEqual(raw.map((r) => r.delay));
  });

  it('reads the date as written: 2001/01/01 00:47 is a Monday just after midnight', () => {
    // 1 January 2001 was a Monday (proleptic Gregorian calendar).
    const flights = loadDataset('flights', { standardize: false });
    expect(raw[0].date).toBe('2001/01/01 00:47');
    const row = Array.from(flights.features.subarray(0, 10));
    const angle = (2 * Math.PI * (47 / 60)) / 24;
    expect(row[0]).toBe(raw[0].distance);
    expect(row[1]).toBeCloseTo(Math.sin(angle), 15);
    expect(row[2]).toBeCloseTo(Math.cos(angle), 15);
    expect(row.slice(3, 9)).toEqual([1, 0, 0, 0, 0, 0]);
  });

  it('labels a flight delayed when its delay is over 15 minutes', () => {
    const delayed = loadDataset('flights', {
      target: 'delayed-over-15-minutes',
      standardize: true,
    });
    const expected = raw.map((r) => ((r.delay as number) > 15 ? 1 : 0));
    expect(Array.from(delayed.targets)).toEqual(expected);
    expect(delayed.classNames).toEqual(['on time', 'delayed']);
  });

  it('splits by origin airport: one client per airport, in sorted order, the same for every seed', () => {
    const scenario = scenarioWith(
      { kind: 'least-squares' },
      { source: 'dataset', name: 'flights', partition: { kind: 'natural', key: 'origin' } },
      220,
    );
    const flights = loadDataset('flights', { standardize: true });
    const airports = naturalKeyOrder(flights.keys.origin);
    const shards = buildAllShards(scenario);
    expect(shards.length).toBe(airports.length);
    const perAirport = new Map<string | number, number>();
    for (const r of raw)
      perAirport.set(r.origin as string, (perAirport.get(r.origin as string) ?? 0) + 1);
    shards.forEach((shard, i) => expect(shard.sampleCount).toBe(perAirport.get(airports[i])));
    expect(airports[0] < airports[1]).toBe(true);
    const reseeded = buildShard({ ...scenario, seed: scenario.seed + 1 }, 7);
    expect(Array.from(reseeded.targets)).toEqual(Array.from(shards[7].targets));
  });

  it('refuses a natural split with a client count other than the number of airports, naming clients.count', () => {
    const scenario = scenarioWith(
      { kind: 'least-squares' },
      { source: 'dataset', name: 'flights', partition: { kind: 'natural', key: 'origin' } },
      20,
    );
    expect(() => buildShard(scenario, 0)).toThrow(
      expect.objectContaining({ code: 'E_DATA_SPEC', fieldPath: 'clients.count' }),
    );
  });
});

describe('gapminder', () => {
  it('holds every row of the file: 62 countries, 6 regions, life expectancy in years', () => {
    const raw = rawVegaRecords('gapminder.json');
    const gapminder = loadDataset('gapminder', { standardize: false });
    expect(gapminder.sampleCount).toBe(raw.length);
    expect(gapminder.droppedRowCount).toBe(0);
    expect(new Set(gapminder.keys.country).size).toBe(new Set(raw.map((r) => r.country)).size);
    expect(new Set(gapminder.keys.country).size).toBe(62);
    expect(new Set(gapminder.keys.region).size).toBe(6);
    expect(Array.from(gapminder.targets)).toEqual(raw.map((r) => r.life_expect));
    // log population: the third column.
    expect(gapminder.features[2]).toBeCloseTo(Math.log(raw[0].pop as number), 12);
  });
});

describe('penguins', () => {
  const raw = rawVegaRecords('penguins.json');
  const measurements = [
    'Beak Length (mm)',
    'Beak Depth (mm)',
    'Flipper Length (mm)',
    'Body Mass (g)',
  ];

  it('holds the 344 penguins the package documents, less those missing a measurement', () => {
    // vega-datasets 3.2.1 datapackage.json: "Records of ... 344 Palmer Archipelago penguins".
    expect(raw.length).toBe(344);
    const missing = raw.filter((r) => !measurements.every((m) => present(r[m]))).length;
    const penguins = loadDataset('penguins', { standardize: true });
    expect(penguins.droppedRowCount).toBe(missing);
    expect(penguins.sampleCount).toBe(344 - missing);
    expect(penguins.classNames).toEqual(['Adelie', 'Chinstrap', 'Gentoo']);
    expect(naturalKeyOrder(penguins.keys.island)).toEqual(['Biscoe', 'Dream', 'Torgersen']);
  });
});

describe('cars', () => {
  const raw = rawVegaRecords('cars.json');
  const columns = [
    'Miles_per_Gallon',
    'Cylinders',
    'Displacement',
    'Horsepower',
    'Weight_in_lbs',
    'Acceleration',
  ];

  it('holds every car of the file with all values present, and counts the rest as dropped', () => {
    const missing = raw.filter((r) => !columns.every((c) => present(r[c]))).length;
    const cars = loadDataset('cars', { standardize: false });
    expect(cars.fileRowCount).toBe(raw.length);
    expect(cars.droppedRowCount).toBe(missing);
    expect(cars.sampleCount).toBe(raw.length - missing);
    expect(naturalKeyOrder(cars.keys.origin)).toEqual(['Europe', 'Japan', 'USA']);
    // The first car of the file: model year 1970, 18 miles per gallon.
    expect(cars.features[5]).toBe(1970);
    expect(cars.targets[0]).toBe(18);
  });

  it('splits by origin into 3 clients holding every kept car', () => {
    const shards = buildAllShards(
      scenarioWith(
        { kind: 'least-squares' },
        { source: 'dataset', name: 'cars', partition: { kind: 'natural', key: 'origin' } },
        3,
      ),
    );
    const cars = loadDataset('cars', { standardize: false });
    expect(shards.map((s) => s.sampleCount)).toEqual(
      naturalKeyOrder(cars.keys.origin).map((o) => cars.keys.origin.filter((k) => k === o).length),
    );
  });
});
