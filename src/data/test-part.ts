// A client's test part: a seeded fraction of its rows, held out of training. The oracle, the
// clients and the standardization see the training rows only; the evaluation scores the model on
// the test rows. Which rows a client holds out is a pure function of (seed, client id, its row
// count), so every process draws the same split.

import { Rng } from '../base/rng.js';

/** A client's rows, as positions in its own row order, split into training and test. */
export interface RowSplit {
  /** ascending */
  training: Uint32Array;
  /** ascending; empty when nothing is held out */
  test: Uint32Array;
}

/** floor(fraction * n) rows held out, but never a client's last training row. */
export function testRowCount(fraction: number, rowCount: number): number {
  if (rowCount <= 1) return 0;
  return Math.min(rowCount - 1, Math.floor(fraction * rowCount));
}

/** Client clientId's split of its rowCount rows. */
export function splitRows(
  seed: number,
  clientId: number,
  rowCount: number,
  fraction: number,
): RowSplit {
  const testCount = testRowCount(fraction, rowCount);
  if (testCount === 0)
    return {
      training: Uint32Array.from({ length: rowCount }, (_, s) => s),
      test: new Uint32Array(0),
    };
  const test = Rng.derive(seed, 'test-part', clientId).sampleWithoutReplacement(
    rowCount,
    testCount,
  );
  const training = new Uint32Array(rowCount - testCount);
  let t = 0;
  let r = 0;
  for (let s = 0; s < rowCount; s++) {
    if (t < testCount && test[t] === s) t++;
    else training[r++] = s;
  }
  return { training, test };
}

/** part[positions[k]] for every k: a client's pool rows picked by position. */
export function pickRows(part: Uint32Array, positions: Uint32Array): Uint32Array {
  const out = new Uint32Array(positions.length);
  for (let k = 0; k < positions.length; k++) out[k] = part[positions[k]];
  return out;
}
