// The repository's own text files, for tests that read the tree as a reviewer would: the files
// git tracks (or, outside a checkout, every file below the root but dependencies and builds).

import { execFileSync } from 'node:child_process';
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join, relative } from 'node:path';
import { fileURLToPath } from 'node:url';

export const repoRoot = fileURLToPath(new URL('../..', import.meta.url))
  .replace(/\/dist\/?$/, '')
  .replace(/\/$/, '');

const SKIPPED_DIRS = new Set(['node_modules', 'dist', '.git', 'results', '.vitest-cache']);
/** Large generated or binary files say nothing a reviewer reads. */
const TEXT_FILE_BYTES_MAX = 4 * 1024 * 1024;

function walk(dir: string, out: string[]): void {
  for (const entry of readdirSync(dir, { withFileTypes: true })) {
    if (entry.isDirectory()) {
      if (!SKIPPED_DIRS.has(entry.name)) walk(join(dir, entry.name), out);
    } else if (entry.isFile()) out.push(relative(repoRoot, join(dir, entry.name)));
  }
}

function trackedPaths(): string[] {
  try {
    const listed = execFileSync(
      'git',
      ['ls-files', '-z', '--cached', '--others', '--exclude-standard'],
      { cwd: repoRoot, encoding: 'utf8' },
    );
    // A path in the middle of a merge is listed once per stage: each file counts once.
    return [...new Set(listed.split('\0').filter((p) => p.length > 0))];
  } catch {
    const out: string[] = [];
    walk(repoRoot, out);
    return out;
  }
}

export interface RepositoryFile {
  path: string;
  text: string;
}

/** Every tracked text file (no NUL byte, at most TEXT_FILE_BYTES_MAX), with its content. */
export function repositoryTextFiles(): RepositoryFile[] {
  const files: RepositoryFile[] = [];
  for (const path of trackedPaths()) {
    const full = join(repoRoot, path);
    let stat;
    try {
      stat = statSync(full);
    } catch {
      continue;
    }
    if (!stat.isFile() || stat.size > TEXT_FILE_BYTES_MAX) continue;
    const text = readFileSync(full, 'utf8');
    if (!text.includes('\0')) files.push({ path, text });
  }
  return files;
}

/** The words of a text: runs of letters, so that "Name," and "(Name" both count. */
export function wordsOf(text: string): string[] {
  return text.match(/\p{L}+/gu) ?? [];
}
