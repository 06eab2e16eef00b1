// Reads a data file that an installed package ships, found through Node's own module resolution
// (so a hoisted, linked or nested install all work), never through a relative node_modules path.
// Nothing is downloaded: a missing package or file is an E_DATASET error naming both.

import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { DataError } from './data-error.js';

const require = createRequire(import.meta.url);

/** How far up from a package's entry point its package.json may be (vega-datasets: 1). */
const PACKAGE_DEPTH_MAX = 8;

/** The folder of an installed package: upwards from its entry point to its own package.json. */
export function packageRoot(packageName: string): string {
  let entry: string;
  try {
    entry = require.resolve(packageName);
  } catch (cause) {
    throw new DataError(
      'E_DATASET',
      `package ${packageName} is not installed (${(cause as Error).message.split('\n')[0]})`,
    );
  }
  let folder = dirname(entry);
  for (let level = 0; level <= PACKAGE_DEPTH_MAX; level++) {
    try {
      const manifest = JSON.parse(readFileSync(join(folder, 'package.json'), 'utf8')) as {
        name?: unknown;
      };
      if (manifest.name === packageName) return folder;
    } catch {
      // no readable package.json at this level: look one further up
    }
    folder = dirname(folder);
  }
  throw new DataError('E_DATASET', `package ${packageName}: no package.json above ${entry}`);
}

/** The parsed JSON of `relativePath` inside the installed package `packageName`. */
export function readPackageJson(packageName: string, relativePath: string): unknown {
  const path = join(packageRoot(packageName), relativePath);
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (cause) {
    throw new DataError(
      'E_DATASET',
      `package ${packageName}: cannot read ${relativePath} (${(cause as Error).message})`,
    );
  }
  try {
    return JSON.parse(text) as unknown;
  } catch (cause) {
    throw new DataError(
      'E_DATASET',
      `package ${packageName}: ${relativePath} is not JSON (${(cause as Error).message})`,
    );
  }
}
