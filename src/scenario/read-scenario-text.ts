// Reads a scenario's text with a byte limit, in chunks through a file descriptor, so that a
// file, a pipe and a device (/dev/zero, /dev/urandom) alike stop at the limit instead of
// filling memory: the size a file reports says nothing about a pipe or a device.

import { closeSync, openSync, readSync } from 'node:fs';
import { ScenarioError } from './scenario-error.js';
import { SCENARIO_TEXT_BYTES_MAX } from './scenario-limits.js';

const CHUNK_BYTES = 64 * 1024;

function fileError(file: string, error: unknown): ScenarioError {
  const code = (error as NodeJS.ErrnoException).code;
  return new ScenarioError(
    'E_SCENARIO_FILE',
    '',
    `${file}: cannot read the scenario (${code ?? (error as Error).message})`,
  );
}

/** The file's text as UTF-8; throws E_SCENARIO_FILE when it cannot be read or exceeds `bytesMax`. */
export function readScenarioText(file: string, bytesMax: number = SCENARIO_TEXT_BYTES_MAX): string {
  let fd: number;
  try {
    fd = openSync(file, 'r');
  } catch (error) {
    throw fileError(file, error);
  }
  try {
    // One byte past the limit tells "exactly at the limit" from "larger".
    const buffer = Buffer.alloc(bytesMax + 1);
    let filled = 0;
    while (filled < buffer.length) {
      let n: number;
      try {
        n = readSync(fd, buffer, filled, Math.min(CHUNK_BYTES, buffer.length - filled), null);
      } catch (error) {
        throw fileError(file, error);
      }
      if (n === 0) return buffer.toString('utf8', 0, filled);
      filled += n;
    }
    throw new ScenarioError(
      'E_SCENARIO_FILE',
      '',
      `${file}: larger than ${bytesMax} bytes, the most a scenario may hold`,
    );
  } finally {
    closeSync(fd);
  }
}
