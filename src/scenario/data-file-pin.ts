// A file scenario names its data file by path; the resolved scenario names it absolutely and
// carries the SHA-256 of its bytes, so that the plan (and its hash) says exactly which data a
// run used and every process that reads the file itself can tell whether it holds the same one.

import { createHash } from 'node:crypto';
import { closeSync, fstatSync, openSync, readSync } from 'node:fs';
import { dirname, isAbsolute, resolve } from 'node:path';
import type { Scenario } from './schema.js';
import { DATA_FILE_LIMITS } from './schema.js';
import { ScenarioError } from './scenario-error.js';

/** The document with a relative data.path made absolute against the scenario file's folder. */
export function withDataPathFrom(document: unknown, scenarioFile: string): unknown {
  if (document === null || typeof document !== 'object') return document;
  const data = (document as { data?: unknown }).data;
  if (data === null || typeof data !== 'object') return document;
  const { source, path } = data as { source?: unknown; path?: unknown };
  if (source !== 'file' || typeof path !== 'string' || path === '' || isAbsolute(path))
    return document;
  return { ...document, data: { ...data, path: resolve(dirname(scenarioFile), path) } };
}

/** The SHA-256 (hex) of a file's bytes, read in chunks up to DATA_FILE_LIMITS.bytesMax. */
export function fileSha256(file: string): string {
  const fd = openSync(file, 'r');
  try {
    const size = fstatSync(fd).size;
    if (size > DATA_FILE_LIMITS.bytesMax)
      throw new RangeError(`${size} bytes, above the limit of ${DATA_FILE_LIMITS.bytesMax}`);
    const hash = createHash('sha256');
    const buffer = Buffer.alloc(1024 * 1024);
    for (;;) {
      const n = readSync(fd, buffer, 0, buffer.length, null);
      if (n === 0) return hash.digest('hex');
      hash.update(buffer.subarray(0, n));
    }
  } finally {
    closeSync(fd);
  }
}

/**
 * The scenario with its data file's path absolute (against the working folder when still
 * relative) and its hash filled in; a hash the scenario gives must be the file's.
 */
export function pinDataFile(scenario: Scenario): Scenario {
  const data = scenario.data;
  if (data.source !== 'file') return scenario;
  const path = resolve(data.path);
  let sha256: string;
  try {
    sha256 = fileSha256(path);
  } catch (error) {
    const reason = (error as NodeJS.ErrnoException).code ?? (error as Error).message;
    throw new ScenarioError(
      'E_SCENARIO_FILE',
      'data.path',
      `${path}: cannot read the data file (${reason})`,
    );
  }
  if (data.sha256 !== undefined && data.sha256 !== sha256)
    throw new ScenarioError(
      'E_SCENARIO_FILE',
      'data.sha256',
      `${path} has SHA-256 ${sha256}, the scenario pins ${data.sha256}`,
    );
  return { ...scenario, data: { ...data, path, sha256 } };
}
