// A data file of the user's own, from its text to the pool the problem trains on: the reader's
// refusals name file, line and column; one-hot levels, "all but", missing rows and the scaling
// over the training rows give the numbers worked out by hand here.

import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { readDataFileRecords } from '../../src/data/data-file-records.js';
import { dataFileTable, type DataFileColumns } from '../../src/data/data-file-table.js';
import { buildAllShards, buildTestShard } from '../../src/data/build-shard.js';
import { fileDataset } from '../../src/data/file-pool.js';
import { scenarioWith } from './scenario-fixture.js';
import { DataError } from '../../src/data/data-error.js';

const FILE = '/data/sales.csv';

function table(text: string, spec: Partial<DataFileColumns>, format: 'csv' | 'jsonl' = 'csv') {
  return dataFileTable(readDataFileRecords(FILE, text, format), {
    target: 'y',
    features: { allBut: [] },
    categorical: [],
    key: null,
    missing: 'refuse',
    targetKind: 'real',
    ...spec,
  });
}

function failure(run: () => unknown): { code: string; message: string } {
  try {
    run();
  } catch (error) {
    if (!(error instanceof DataError)) throw error;
    return { code: error.code, message: error.message };
  }
  throw new Error('expected a refusal');
}

describe('the data file reader refuses', () => {
  it('a missing column, naming it and listing the header', () => {
    const refusal = failure(() => table('a,b,y\n1,2,3\n', { features: ['a', 'c'] }));
    expect(refusal).toEqual({
      code: 'E_DATA_FILE',
      message: `${FILE}, line 1: no column "c" (data.features); the columns are a, b, y`,
    });
  });

  it('a non-numeric feature or least-squares target at its line and column', () => {
    const feature = failure(() => table('a,b,y\n1,2,3\n4,five,6\n', {}));
    expect(feature.code).toBe('E_DATA_FILE');
    expect(feature.message).toMatch(
      /^\/data\/sales\.csv, line 3, column 2 \("b"\): "five" is not a number \(a feature;/,
    );
    const target = failure(() => table('a,y\n1,2\n\n3,n/a\n', {}));
    expect(target.message).toMatch(
      /^\/data\/sales\.csv, line 4, column 2 \("y"\): "n\/a" is not a number \(a least-squares target\)/,
    );
  });

  it('an empty key, whatever data.missing says', () => {
    const refusal = failure(() => table('k,a,y\nx,1,2\n,3,4\n', { key: 'k', missing: 'drop' }));
    expect(refusal.message).toBe(
      `${FILE}, line 3, column 1 ("k"): an empty key: every row must name its client`,
    );
  });

  it('a ragged row, naming the first column it lacks', () => {
    const refusal = failure(() => table('a,b,y\n1,2,3\n4,5\n', {}));
    expect(refusal.message).toBe(
      `${FILE}, line 3, column 3 ("y"): a ragged row: 2 fields, the header has 3 columns`,
    );
  });

  it('a row whose quoted field spans lines is placed at its first line', () => {
    const refusal = failure(() => table('a,b,y\n1,2,3\n4,"five\nsix",6\n', {}));
    expect(refusal.message).toMatch(/^\/data\/sales\.csv, line 3, column 2 \("b"\): "five\\nsix"/);
  });

  it('bad JSON on a JSONL line, at the column JSON.parse points to', () => {
    const text = '{"a": 1, "y": 2}\n{"a": 3, "y": 4,}\n';
    const refusal = failure(() => table(text, {}, 'jsonl'));
    // Position 16 (0-based) of the second line is the "}" after the trailing comma.
    expect(refusal.message).toMatch(/^\/data\/sales\.csv, line 2, column 17: bad JSON \(/);
  });

  it('an empty file, and a missing value when data.missing is refuse', () => {
    expect(failure(() => table('', {})).message).toBe(`${FILE}: the file is empty`);
    expect(failure(() => table('\n\n', {}, 'jsonl')).message).toBe(`${FILE}: the file is empty`);
    expect(failure(() => table('a,y\n1,2\n,3\n', {})).message).toMatch(
      /^\/data\/sales\.csv, line 3, column 1 \("a"\): a missing value/,
    );
  });
});

describe('the data file table', () => {
  it('one-hot encodes a categorical column with its values in sorted order', () => {
    const t = table('day,t,y\nwed,1,10\nmon,2,11\nwed,3,12\ntue,4,13\n', {
      categorical: ['day'],
    });
    expect(t.featureNames).toEqual(['day=mon', 'day=tue', 'day=wed', 't']);
    expect(t.numeric).toEqual([false, false, false, true]);
    expect(Array.from(t.features)).toEqual([
      ...[0, 0, 1, 1],
      ...[1, 0, 0, 2],
      ...[0, 0, 1, 3],
      ...[0, 1, 0, 4],
    ]);
    expect(Array.from(t.targets)).toEqual([10, 11, 12, 13]);
  });

  it('takes every column but the listed ones, the target and the key', () => {
    const t = table('id,k,a,b,y\n1,p,2,3,4\n', { features: { allBut: ['id'] }, key: 'k' });
    expect(t.featureNames).toEqual(['a', 'b']);
    expect(t.keys).toEqual(['p']);
  });

  it('drops and counts rows with a missing feature or target when asked', () => {
    const text = 'k,a,y\np,1,2\np,,3\nq,4,\nq,5,6\n';
    const t = table(text, { key: 'k', missing: 'drop' });
    expect(t.fileRowCount).toBe(4);
    expect(t.droppedRowCount).toBe(2);
    expect(Array.from(t.lines)).toEqual([2, 5]);
    expect(Array.from(t.features)).toEqual([1, 5]);
    expect(t.keys).toEqual(['p', 'q']);
    // JSONL: null and an absent key are missing values too.
    const jsonl = '{"a": 1, "y": 2}\n{"a": null, "y": 3}\n{"y": 4}\n';
    expect(table(jsonl, { missing: 'drop' }, 'jsonl').droppedRowCount).toBe(2);
  });

  it('numbers class labels in sorted order', () => {
    const t = table('a,y\n1,gentoo\n2,adelie\n3,chinstrap\n4,adelie\n', { targetKind: 'label' });
    expect(t.classNames).toEqual(['adelie', 'chinstrap', 'gentoo']);
    expect(Array.from(t.targets)).toEqual([2, 0, 1, 0]);
  });
});

describe('a file scenario', () => {
  const folder = mkdtempSync(join(tmpdir(), 'roundwire-data-file-'));
  const file = join(folder, 'shops.csv');
  // Two shops; "size" is a category; row 4 misses its temperature and is dropped.
  writeFileSync(
    file,
    'shop,size,temp,sold\nnorth,big,10,5\nnorth,small,14,7\nsouth,big,,9\nsouth,small,18,11\nsouth,big,22,13\n',
  );

  it('standardizes numeric features over the training rows and leaves one-hot columns 0/1', () => {
    const scenario = scenarioWith(
      { kind: 'least-squares' },
      {
        source: 'file',
        path: file,
        format: 'csv',
        target: 'sold',
        features: ['size', 'temp'],
        categorical: ['size'],
        missing: 'drop',
        partition: { kind: 'natural', key: 'shop' },
      },
      2,
    );
    const dataset = fileDataset(scenario);
    expect(dataset.featureNames).toEqual(['size=big', 'size=small', 'temp', 'intercept']);
    expect(dataset.table.droppedRowCount).toBe(1);
    // temp over the kept rows 10, 14, 18, 22: mean 16, population variance (36+4+4+36)/4 = 20.
    const sd = Math.sqrt(20);
    const temps = [10, 14, 18, 22].map((t) => (t - 16) / sd);
    expect(Array.from(dataset.features)).toEqual([
      ...[1, 0, temps[0], 1],
      ...[0, 1, temps[1], 1],
      ...[0, 1, temps[2], 1],
      ...[1, 0, temps[3], 1],
    ]);
    // The natural split: north (2 rows), south (2 kept rows), in sorted key order.
    const shards = buildAllShards(scenario);
    expect(shards.map((s) => s.sampleCount)).toEqual([2, 2]);
    expect(Array.from(shards[1].targets)).toEqual([11, 13]);
  });

  it('with a held-out part, scales by the training rows alone and gives the test rows apart', () => {
    const scenario = scenarioWith(
      { kind: 'least-squares' },
      {
        source: 'file',
        path: file,
        format: 'csv',
        target: 'sold',
        features: ['temp'],
        missing: 'drop',
        partition: { kind: 'natural', key: 'shop' },
        testFraction: 0.5,
      },
      2,
    );
    const training = buildAllShards(scenario);
    const test = [0, 1].map((id) => buildTestShard(scenario, id));
    // floor(0.5 x 2) = 1 row of each shop's 2 is held out.
    expect(training.map((s) => s.sampleCount)).toEqual([1, 1]);
    expect(test.map((s) => s.sampleCount)).toEqual([1, 1]);
    // Every kept row is in exactly one part: the targets 5, 7, 11, 13 once each.
    const targets = [...training, ...test]
      .flatMap((s) => Array.from(s.targets))
      .sort((a, b) => a - b);
    expect(targets).toEqual([5, 7, 11, 13]);
    // temp (column 0) is scaled by the two training rows: mean 0 and population variance 1 over
    // them, whatever the held-out rows hold.
    const trainingTemps = training.map((s) => s.features[0]);
    expect(trainingTemps[0] + trainingTemps[1]).toBeCloseTo(0, 14);
    expect((trainingTemps[0] ** 2 + trainingTemps[1] ** 2) / 2).toBeCloseTo(1, 14);
    // The held-out rows are scaled by the same increasing affine map, and temp rises with sold in
    // these rows, so ordered by sold the scaled temps still rise.
    const all = [...training, ...test].map((s) => [s.targets[0], s.features[0]]);
    all.sort((a, b) => a[0] - b[0]);
    for (let k = 1; k < all.length; k++) expect(all[k][1]).toBeGreaterThan(all[k - 1][1]);
  });

  it('refuses a class count other than problem.classes, and a client count other than the keys', () => {
    const data = {
      source: 'file' as const,
      path: file,
      format: 'csv' as const,
      target: 'size',
      features: ['temp'],
      missing: 'drop' as const,
      partition: { kind: 'natural' as const, key: 'shop' },
    };
    const classes = failure(() =>
      fileDataset(scenarioWith({ kind: 'softmax', classes: 3 }, data, 2)),
    );
    expect(classes.message).toBe(
      `${file}: the target "size" has 2 labels (big, small); problem.kind "softmax" has problem.classes 3`,
    );
    const clients = failure(() => buildAllShards(scenarioWith({ kind: 'logistic' }, data, 3)));
    expect(clients.code).toBe('E_DATA_SPEC');
    expect(clients.message).toMatch(/2 values, so clients.count must be 2, got 3/);
  });
});
