// The shared key that workers prove to the coordinator comes from a file, named by --key-file or
// by the ROUNDWIRE_KEY_FILE environment variable. Never the key itself on the command line (ps
// and shell history show it) or in an environment variable (every child process inherits it).
// The key is the file's bytes, less trailing line breaks, at least KEY_BYTES_MIN of them. A file
// that other users may read or change is refused: the key is only as secret as its file.
//
// A coordinator on loopback given no key file writes a fresh one (writeFreshKeyFile) in a
// private temporary folder, for the workers it starts and for workers started by hand on the
// same machine, and removes it when it ends. Not in the results folder: results get copied and
// shared, a key should not travel with them.

import { randomBytes } from 'node:crypto';
import { mkdtempSync, readFileSync, rmSync, statSync, writeFileSync, type Stats } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { CodedError } from '../base/coded-error.js';

/** Names the key file when --key-file is absent. */
export const KEY_FILE_ENVIRONMENT_VARIABLE = 'ROUNDWIRE_KEY_FILE';

/**
 * Fewest key bytes: 128 bits when the key is random, and enough to refuse a short word typed by
 * hand. The fresh key is longer (FRESH_KEY_RANDOM_BYTES random bytes as hex).
 */
export const KEY_BYTES_MIN = 16;

/** A file far larger than any key is a wrong path (a data set, a log), not a key. */
export const KEY_FILE_BYTES_MAX = 4096;

/** Random bytes of a fresh key: the HMAC-SHA256 output length (RFC 2104 section 3 advises no less). */
const FRESH_KEY_RANDOM_BYTES = 32;

/** Permission bits of the group and of others: any of them set opens the key to other users. */
const SHARED_MODE_BITS = 0o077;

/** A key file that cannot serve: missing, unreadable, open to others, too short or too long. */
export class KeyFileError extends CodedError<'E_KEY_FILE'> {}

/** A key file and what named it: the option or the environment variable, for messages. */
export interface KeyFileSource {
  path: string;
  origin: string;
}

/** The key file named by --key-file, else by ROUNDWIRE_KEY_FILE; null when neither names one. */
export function keyFileSource(
  option: string | undefined,
  env: NodeJS.ProcessEnv,
): KeyFileSource | null {
  if (option !== undefined) return { path: option, origin: '--key-file' };
  const named = env[KEY_FILE_ENVIRONMENT_VARIABLE];
  if (named === undefined || named === '') return null;
  return { path: named, origin: KEY_FILE_ENVIRONMENT_VARIABLE };
}

function statOf(source: KeyFileSource): Stats {
  try {
    return statSync(source.path);
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code ?? (error as Error).message;
    throw new KeyFileError('E_KEY_FILE', `${source.origin}: cannot read ${source.path} (${code})`);
  }
}

/** The shared key in `source`'s file; throws KeyFileError (bad input) when the file cannot serve. */
export function readKeyFile(source: KeyFileSource): Uint8Array {
  const { path, origin } = source;
  const stats = statOf(source);
  if (!stats.isFile())
    throw new KeyFileError('E_KEY_FILE', `${origin}: ${path} is not a regular file`);
  // Windows reports no group or other bits worth checking; its folders' ACLs protect the file.
  if (process.platform !== 'win32' && (stats.mode & SHARED_MODE_BITS) !== 0) {
    const mode = (stats.mode & 0o777).toString(8).padStart(3, '0');
    throw new KeyFileError(
      'E_KEY_FILE',
      `${origin}: ${path} is open to other users (mode ${mode}); make it private with chmod 600 ${path}`,
    );
  }
  if (stats.size > KEY_FILE_BYTES_MAX) {
    throw new KeyFileError(
      'E_KEY_FILE',
      `${origin}: ${path} is ${stats.size} bytes, more than a key file holds (at most ${KEY_FILE_BYTES_MAX}); is it the right file?`,
    );
  }
  let bytes: Buffer;
  try {
    bytes = readFileSync(path);
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code ?? (error as Error).message;
    throw new KeyFileError('E_KEY_FILE', `${origin}: cannot read ${path} (${code})`);
  }
  let end = bytes.length;
  while (end > 0 && (bytes[end - 1] === 0x0a || bytes[end - 1] === 0x0d)) end--;
  if (end < KEY_BYTES_MIN) {
    throw new KeyFileError(
      'E_KEY_FILE',
      `${origin}: ${path} holds a ${end}-byte key, at least ${KEY_BYTES_MIN} bytes expected; write a longer random one`,
    );
  }
  return new Uint8Array(bytes.subarray(0, end));
}

/** A key file written for one coordinator's lifetime. */
export interface FreshKeyFile {
  path: string;
  key: Uint8Array;
  /** Deletes the file and its folder; safe to call more than once. */
  remove(): void;
}

/** Writes a fresh random key, readable by this user only, into a new private temporary folder. */
export function writeFreshKeyFile(): FreshKeyFile {
  const folder = mkdtempSync(join(tmpdir(), 'roundwire-key-'));
  const path = join(folder, 'key');
  const text = randomBytes(FRESH_KEY_RANDOM_BYTES).toString('hex');
  writeFileSync(path, `${text}\n`, { mode: 0o600, flag: 'wx' });
  return {
    path,
    key: new Uint8Array(Buffer.from(text, 'utf8')),
    remove: () => rmSync(folder, { recursive: true, force: true }),
  };
}
