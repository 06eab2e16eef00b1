// FedLin is cited only as "FedLin (NeurIPS 2021)": no personal name of that paper's authors
// appears anywhere in the repository. The names are held here only as SHA-256 digests of their
// lower-case spelling, so that this test does not itself carry them; every word of every tracked
// text file is hashed and looked up.

import { createHash } from 'node:crypto';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { repositoryTextFiles, wordsOf } from './repository-files.js';

const AUTHOR_SURNAME_SHA256 = new Set([
  'ef7c6cba58cf82997b990feec6b78b1cf73b4a0b3a6b1b0c46fac8a56ca70549',
  'dac5b571c0617976998c1a8ad09b18ef16f04c8c7d585577c8917f7545c9a598',
  'e2c34c9212399572518cca00a2cd54e54687ba546fa6f6f0926070e667b06646',
  '0d4dbc944f7922237e90dee07df98734e251ae1e066301f8283ef0149a68c1ba',
]);

function sha256(word: string): string {
  return createHash('sha256').update(word.toLowerCase()).digest('hex');
}

function filesNaming(
  digests: ReadonlySet<string>,
  files: readonly { path: string; text: string }[],
): string[] {
  return files
    .filter((f) => wordsOf(f.text).some((w) => digests.has(sha256(w))))
    .map((f) => f.path);
}

const scratch = mkdtempSync(join(tmpdir(), 'rw-citations-'));
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

describe('citations', () => {
  it('the scanner finds a planted word by its digest (so an empty result means something)', () => {
    const planted = join(scratch, 'planted.md');
    writeFileSync(planted, 'A line that cites Quillfeather et al. in passing.\n');
    const found = filesNaming(new Set([sha256('quillfeather')]), [
      { path: planted, text: 'A line that cites Quillfeather et al.' },
    ]);
    expect(found).toEqual([planted]);
  });

  it('no tracked file names an author of the FedLin paper', () => {
    const files = repositoryTextFiles();
    expect(files.length).toBeGreaterThan(100);
    expect(filesNaming(AUTHOR_SURNAME_SHA256, files)).toEqual([]);
  });
});
