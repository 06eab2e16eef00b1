import { describe, expect, it } from 'vitest';
import { INTERCEPT_FEATURE, loadDataset, standardizeColumns } from '../../src/data/datasets.js';

describe('iris', () => {
  it('loads 150 samples of 4 features with 3 classes of 50', () => {
    // Fisher (1936), as distributed by the UCI Machine Learning Repository: 150 samples, 4
    // features, 50 each of setosa, versicolor and virginica.
    const iris = loadDataset('iris', { standardize: false });
    expect(iris.sampleCount).toBe(150);
    expect(iris.featureCount).toBe(4);
    expect(iris.features.length).toBe(600);
    expect(iris.classNames).toEqual(['setosa', 'versicolor', 'virginica']);
    const counts = [0, 0, 0];
    for (const label of iris.targets) counts[label]++;
    expect(counts).toEqual([50, 50, 50]);
    expect(iris.keys).toEqual({});
    expect(iris.featureNames).not.toContain(INTERCEPT_FEATURE);
  });

  it('keeps the raw measurements: the first sample is 5.1, 3.5, 1.4, 0.2 (setosa)', () => {
    // UCI Machine Learning Repository, iris.data, line 1: 5.1,3.5,1.4,0.2,Iris-setosa.
    const iris = loadDataset('iris', { standardize: false });
    expect(Array.from(iris.features.subarray(0, 4))).toEqual([5.1, 3.5, 1.4, 0.2]);
    expect(iris.targets[0]).toBe(0);
  });

  it('standardizes every feature to mean 0 and population variance 1', () => {
    const iris = loadDataset('iris', { standardize: true });
    const raw = loadDataset('iris', { standardize: false });
    for (let j = 0; j < 4; j++) {
      let sum = 0;
      let squares = 0;
      for (let s = 0; s < 150; s++) sum += iris.features[s * 4 + j];
      for (let s = 0; s < 150; s++) squares += iris.features[s * 4 + j] ** 2;
      expect(Math.abs(sum / 150)).toBeLessThan(1e-12);
      expect(squares / 150).toBeCloseTo(1, 12);
    }
    // Standardizing is affine per column, so the order of the samples within a column stays.
    expect(Math.sign(iris.features[4] - iris.features[0])).toBe(
      Math.sign(raw.features[4] - raw.features[0]),
    );
  });

  it('returns a fresh copy each time', () => {
    const a = loadDataset('iris', { standardize: false });
    a.features[0] = 99;
    expect(loadDataset('iris', { standardize: false }).features[0]).toBe(5.1);
  });
});

describe('standardizeColumns', () => {
  it('centres a constant column without dividing by zero', () => {
    const features = Float64Array.from([1, 7, 2, 7, 3, 7]);
    standardizeColumns(features, 3, 2);
    expect(Array.from(features.filter((_, i) => i % 2 === 1))).toEqual([0, 0, 0]);
    // Column 0 is 1, 2, 3: mean 2, population standard deviation sqrt(2/3).
    expect(features[0]).toBeCloseTo(-1 / Math.sqrt(2 / 3), 12);
  });
});

describe('the intercept column', () => {
  it('is appended after standardizing, so it stays 1 while the measured columns are centred', () => {
    const cars = loadDataset('cars', { standardize: true });
    const p = cars.featureCount;
    expect(cars.featureNames[p - 1]).toBe(INTERCEPT_FEATURE);
    let sum = 0;
    for (let s = 0; s < cars.sampleCount; s++) {
      expect(cars.features[s * p + p - 1]).toBe(1);
      sum += cars.features[s * p];
    }
    expect(Math.abs(sum / cars.sampleCount)).toBeLessThan(1e-12);
  });

  it('refuses a target the data set does not have, naming data.target', () => {
    expect(() => loadDataset('cars', { target: 'species', standardize: true })).toThrow(
      expect.objectContaining({ code: 'E_DATA_SPEC', fieldPath: 'data.target' }),
    );
  });
});
