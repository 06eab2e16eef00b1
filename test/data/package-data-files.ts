// Reads a package's raw data file for the loader tests, independently of the loaders: the test
// counts rows with its own JSON.parse and filters, then compares with what the loader built.
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';

const require = createRequire(import.meta.url);

/** vega-datasets' entry point is build/index.js; its data files are in data/. */
export function rawVegaRecords(file: string): Record<string, unknown>[] {
  const root = dirname(dirname(require.resolve('vega-datasets')));
  return JSON.parse(readFileSync(join(root, 'data', file), 'utf8')) as Record<string, unknown>[];
}

/** mnist's entry point is src/mnist.js; digit d's images are src/digits/d.json. */
export function rawDigitValueCount(digit: number): number {
  const root = dirname(require.resolve('mnist'));
  const json = JSON.parse(readFileSync(join(root, 'digits', `${digit}.json`), 'utf8')) as {
    data: number[];
  };
  return json.data.length;
}
