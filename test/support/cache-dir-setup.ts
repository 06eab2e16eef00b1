// Every process a test run starts (vitest's workers and the CLI processes they spawn inherit
// this environment) keeps the oracle's disk cache in one temporary folder of its own, removed at
// the end, never in the user's ~/.cache.

import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

export default function setup(): () => void {
  const dir = mkdtempSync(join(tmpdir(), 'roundwire-test-cache-'));
  process.env.ROUNDWIRE_CACHE_DIR = dir;
  return () => rmSync(dir, { recursive: true, force: true });
}
