// Where the bench finds the compiled CLI it runs as a child process, from test/bench/ under
// vitest and from dist/test/bench/ once built.

import { existsSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

/** The repository's root: the nearest folder above this file that holds bin/roundwire.js. */
export function repositoryRoot(): string {
  let dir = dirname(fileURLToPath(import.meta.url));
  while (!existsSync(join(dir, 'bin', 'roundwire.js'))) {
    const parent = dirname(dir);
    if (parent === dir) throw new Error('bench: bin/roundwire.js not found above the bench');
    dir = parent;
  }
  return dir;
}
