// The oracle's disk cache: hit, miss, and damaged or foreign entries ignored with a warning.
import { mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { diskTheoryStore, entryFileName, theoryCacheDir } from '../../runtime/theory-cache.js';
import type { StoredTheory } from '../../src/theory/plan-theory.js';

const entry: StoredTheory = {
  optimum: { x: [0.1, -2.5, 1 / 3], loss: 0.75, gradientNorm: 3e-12, iterations: 2 },
  constants: { smoothness: 4, strongConvexity: 0.5, heterogeneity: 1.25 },
  details: null,
};

describe('diskTheoryStore', () => {
  let dir: string;
  let warnings: string[];
  beforeEach(() => {
    dir = mkdtempSync(join(tmpdir(), 'roundwire-cache-'));
    warnings = [];
  });
  afterEach(() => rmSync(dir, { recursive: true, force: true }));
  const store = () => diskTheoryStore(join(dir, 'oracle'), (m) => warnings.push(m));

  it('misses quietly, then hits with the very numbers written, leaving no temporary file', () => {
    expect(store().read('abc', 2)).toBeNull();
    store().write('abc', 2, entry);
    expect(store().read('abc', 2)).toEqual(entry);
    expect(readdirSync(join(dir, 'oracle'))).toEqual([entryFileName('abc', 2)]);
    expect(warnings).toEqual([]);
  });

  it('keys entries by oracle version: another version misses', () => {
    store().write('abc', 2, entry);
    expect(store().read('abc', 3)).toBeNull();
    expect(warnings).toEqual([]);
  });

  it('ignores an entry whose body no longer matches its hash, with a warning', () => {
    store().write('abc', 2, entry);
    const file = join(dir, 'oracle', entryFileName('abc', 2));
    writeFileSync(file, readFileSync(file, 'utf8').replace('0.75', '0.76'));
    expect(store().read('abc', 2)).toBeNull();
    expect(warnings).toHaveLength(1);
    expect(warnings[0]).toMatch(/hash does not match/);
  });

  it('ignores an entry filed under another problem hash, and one that is not a cache entry', () => {
    store().write('abc', 2, entry);
    const oracleDir = join(dir, 'oracle');
    writeFileSync(
      join(oracleDir, entryFileName('xyz', 2)),
      readFileSync(join(oracleDir, entryFileName('abc', 2))),
    );
    expect(store().read('xyz', 2)).toBeNull();
    writeFileSync(join(oracleDir, entryFileName('def', 2)), 'not json\n{}');
    expect(store().read('def', 2)).toBeNull();
    expect(warnings).toHaveLength(2);
    expect(warnings[0]).toMatch(/another problem/);
    expect(warnings[1]).toMatch(/header/);
  });

  it('says where it keeps entries: ROUNDWIRE_CACHE_DIR, else the user cache folder', () => {
    expect(theoryCacheDir({ ROUNDWIRE_CACHE_DIR: '/srv/rw' })).toBe('/srv/rw');
    expect(theoryCacheDir({ XDG_CACHE_HOME: '/home/u/.cache-x' })).toBe(
      '/home/u/.cache-x/roundwire/oracle',
    );
  });
});
