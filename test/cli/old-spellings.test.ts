// Our own names only: the spellings roundwire gave up (they read as other programs' idioms) appear
// in no --help text, no document, no bundled scenario and no Grafana file. Each is matched as
// the option or file name it was, so that ordinary words ("set", "token" of a resume) stay free.

import { execFileSync } from 'node:child_process';
import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { repoRoot } from '../integration/cli-process.js';

const GONE = [
  /--vary\b/,
  /--set\b/,
  /--join\b/,
  /--token\b/,
  /--slots\b/,
  /\bsummary\.json\b/,
  /^\s*sweep:/m,
  /ROUNDWIRE_TOKEN/,
];
const COMMANDS = [
  'theory',
  'shards',
  'run',
  'worker',
  'coordinator',
  'report',
  'compare',
  'schema',
];

function helpOf(command: string | null): string {
  const args = command === null ? ['--help'] : [command, '--help'];
  return execFileSync(process.execPath, [join(repoRoot, 'bin/roundwire.js'), ...args], {
    encoding: 'utf8',
  });
}

function filesUnder(dir: string): string[] {
  return readdirSync(join(repoRoot, dir), { withFileTypes: true, recursive: true })
    .filter((e) => e.isFile())
    .map((e) => join(e.parentPath, e.name));
}

function offenders(texts: readonly { name: string; text: string }[]): string[] {
  return texts.flatMap(({ name, text }) =>
    GONE.filter((p) => p.test(text)).map((p) => `${name}: ${p.source}`),
  );
}

describe('old spellings are gone', () => {
  it('from every --help text', () => {
    const helps = [null, ...COMMANDS].map((c) => ({
      name: `${c ?? 'roundwire'} --help`,
      text: helpOf(c),
    }));
    expect(helps.find((h) => h.name === 'compare --help')!.text).toMatch(/--ladder/);
    expect(helps.find((h) => h.name === 'worker --help')!.text).toMatch(
      /--key-file[\s\S]*--capacity/,
    );
    expect(offenders(helps)).toEqual([]);
  }, 60_000);

  it('from the README, the contributor guide, the scenarios and the Grafana files', () => {
    const files = [
      'README.md',
      'DEVELOPERS.md',
      ...filesUnder('scenarios'),
      ...filesUnder('grafana'),
    ].map((f) => (f.startsWith('/') ? f : join(repoRoot, f)));
    expect(files.length).toBeGreaterThan(8);
    expect(offenders(files.map((f) => ({ name: f, text: readFileSync(f, 'utf8') })))).toEqual([]);
  });
});
