// Error codes say where they come from: each is declared in exactly one place in the project
// (a layer's ErrorCode union, a CodedError<'E_...'> class, or a class's `readonly code`), so a
// code in a message or a test names one module. The exit-code table (src/commands/exit-codes.ts)
// names only declared codes, and no protocol code (those travel on the wire) exits 2.

import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { BAD_INPUT_CODES, exitCodeOf, exitCodes } from '../../src/commands/exit-codes.js';
import { repositoryTextFiles } from '../repository/repository-files.js';

const SOURCE_DIRS = /^(src|server|client|runtime)\//;

/** code -> the files that declare it */
function declaredCodes(): Map<string, string[]> {
  const out = new Map<string, string[]>();
  const add = (code: string, path: string) => out.set(code, [...(out.get(code) ?? []), path]);
  for (const { path, text } of repositoryTextFiles()) {
    if (!SOURCE_DIRS.test(path) || !path.endsWith('.ts')) continue;
    for (const union of text.matchAll(/type \w*ErrorCode\s*=([^;]+);/g)) {
      for (const m of union[1].matchAll(/'(E_[A-Z0-9_]+)'/g)) add(m[1], path);
    }
    for (const m of text.matchAll(/CodedError<'(E_[A-Z0-9_]+)'>/g)) add(m[1], path);
    for (const m of text.matchAll(/readonly code = '(E_[A-Z0-9_]+)'/g)) add(m[1], path);
  }
  return out;
}

describe('error codes', () => {
  const declared = declaredCodes();

  it('are each declared in one place', () => {
    expect(declared.size).toBeGreaterThan(60);
    const twice = [...declared]
      .filter(([, files]) => files.length > 1)
      .map(([code, files]) => `${code}: ${files.join(', ')}`);
    expect(twice).toEqual([]);
  });

  it('map to exit codes through the one table, which names only declared codes and no protocol code', () => {
    for (const code of BAD_INPUT_CODES) expect(declared.has(code), code).toBe(true);
    const protocolCodes = [
      ...readFileSync('src/protocol/errors.ts', 'utf8').matchAll(/'(E_[A-Z0-9_]+)'/g),
    ].map((m) => m[1]);
    expect(protocolCodes.length).toBeGreaterThan(5);
    for (const code of protocolCodes) expect(BAD_INPUT_CODES.has(code), code).toBe(false);
    expect(exitCodeOf({ code: 'E_SCENARIO_FIELD' })).toBe(exitCodes.badInput);
    expect(exitCodeOf({ code: 'E_PROBLEM_NOT_CERTIFIED' })).toBe(exitCodes.failure);
    expect(exitCodeOf(new Error('no code'))).toBe(exitCodes.failure);
  });
});
