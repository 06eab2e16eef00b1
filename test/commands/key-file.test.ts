// The shared key's file: what counts as the key, which files are refused (each with a coded
// error naming the option or variable that named the file), and the fresh key file a loopback
// coordinator writes. Modes are POSIX permission bits (POSIX.1-2017, <sys/stat.h>).

import {
  chmodSync,
  mkdirSync,
  mkdtempSync,
  readFileSync,
  rmSync,
  statSync,
  writeFileSync,
} from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import {
  KEY_BYTES_MIN,
  KEY_FILE_BYTES_MAX,
  KeyFileError,
  keyFileSource,
  readKeyFile,
  writeFreshKeyFile,
} from '../../src/commands/key-file.js';
import { codeOf } from '../support/error-code.js';

const folders: string[] = [];
afterEach(() => {
  for (const f of folders.splice(0)) rmSync(f, { recursive: true, force: true });
});

function folder(): string {
  const dir = mkdtempSync(join(tmpdir(), 'roundwire-key-test-'));
  folders.push(dir);
  return dir;
}

function keyFile(content: string | Buffer, mode = 0o600): string {
  const file = join(folder(), 'shared.key');
  writeFileSync(file, content);
  chmodSync(file, mode);
  return file;
}

const fromOption = (path: string) => ({ path, origin: '--key-file' });

/** The action throws KeyFileError E_KEY_FILE whose message holds `messagePart`. */
function expectRefused(action: () => unknown, messagePart: string): void {
  expect(codeOf(action, KeyFileError)).toBe('E_KEY_FILE');
  expect(action).toThrow(messagePart);
}
const text = (bytes: Uint8Array) => Buffer.from(bytes).toString('utf8');

describe('keyFileSource', () => {
  it('takes --key-file first, then ROUNDWIRE_KEY_FILE, and names which one', () => {
    expect(keyFileSource('/a', { ROUNDWIRE_KEY_FILE: '/b' })).toEqual({
      path: '/a',
      origin: '--key-file',
    });
    expect(keyFileSource(undefined, { ROUNDWIRE_KEY_FILE: '/b' })).toEqual({
      path: '/b',
      origin: 'ROUNDWIRE_KEY_FILE',
    });
    expect(keyFileSource(undefined, { ROUNDWIRE_KEY_FILE: '' })).toBeNull();
    expect(keyFileSource(undefined, {})).toBeNull();
  });
});

describe('readKeyFile', () => {
  it('is the file without its trailing line breaks', () => {
    expect(text(readKeyFile(fromOption(keyFile('0123456789abcdef-key\n'))))).toBe(
      '0123456789abcdef-key',
    );
    expect(text(readKeyFile(fromOption(keyFile('0123456789abcdef-key\r\n\n'))))).toBe(
      '0123456789abcdef-key',
    );
    // Inner spaces and line breaks are part of the key.
    expect(text(readKeyFile(fromOption(keyFile(' 0123456789\nabcdef \n'))))).toBe(
      ' 0123456789\nabcdef ',
    );
  });

  it(`needs at least ${KEY_BYTES_MIN} bytes after the trim`, () => {
    expect(readKeyFile(fromOption(keyFile(`${'k'.repeat(KEY_BYTES_MIN)}\n`))).length).toBe(
      KEY_BYTES_MIN,
    );
    const short = keyFile(`${'k'.repeat(KEY_BYTES_MIN - 1)}\n`);
    expectRefused(
      () => readKeyFile(fromOption(short)),
      `--key-file: ${short} holds a ${KEY_BYTES_MIN - 1}-byte key, at least ${KEY_BYTES_MIN} bytes expected`,
    );
    expectRefused(() => readKeyFile(fromOption(keyFile('\n\n'))), 'holds a 0-byte key');
  });

  it('refuses a file the group or others may read or write, and says how to fix it', () => {
    for (const mode of [0o644, 0o640, 0o604, 0o620, 0o602]) {
      const file = keyFile('0123456789abcdef0123\n', mode);
      const modeText = mode.toString(8);
      expectRefused(
        () => readKeyFile(fromOption(file)),
        `--key-file: ${file} is open to other users (mode ${modeText}); make it private with chmod 600 ${file}`,
      );
    }
    expect(readKeyFile(fromOption(keyFile('0123456789abcdef0123\n', 0o400))).length).toBe(20);
  });

  it('names the variable that named the file', () => {
    const file = keyFile('short\n');
    expectRefused(
      () => readKeyFile({ path: file, origin: 'ROUNDWIRE_KEY_FILE' }),
      `ROUNDWIRE_KEY_FILE: ${file} holds a 5-byte key`,
    );
  });

  it('refuses a missing file, a folder and a file larger than any key', () => {
    const missing = join(folder(), 'absent.key');
    expectRefused(
      () => readKeyFile(fromOption(missing)),
      `--key-file: cannot read ${missing} (ENOENT)`,
    );
    const dir = join(folder(), 'a-folder');
    mkdirSync(dir, { mode: 0o700 });
    expectRefused(() => readKeyFile(fromOption(dir)), `--key-file: ${dir} is not a regular file`);
    const big = keyFile(Buffer.alloc(KEY_FILE_BYTES_MAX + 1, 0x61));
    expectRefused(
      () => readKeyFile(fromOption(big)),
      `is ${KEY_FILE_BYTES_MAX + 1} bytes, more than a key file holds`,
    );
  });
});

describe('writeFreshKeyFile', () => {
  it('writes a random key only this user may read, in a private folder, that reads back as the same key', () => {
    const fresh = writeFreshKeyFile();
    try {
      expect(statSync(fresh.path).mode & 0o777).toBe(0o600);
      expect(statSync(dirname(fresh.path)).mode & 0o777).toBe(0o700);
      expect(Buffer.from(readKeyFile(fromOption(fresh.path))).equals(Buffer.from(fresh.key))).toBe(
        true,
      );
      // 32 random bytes as hex: 64 characters and a line break.
      expect(readFileSync(fresh.path, 'utf8')).toMatch(/^[0-9a-f]{64}\n$/);
      const other = writeFreshKeyFile();
      expect(Buffer.from(other.key).equals(Buffer.from(fresh.key))).toBe(false);
      other.remove();
    } finally {
      fresh.remove();
    }
    expect(() => statSync(dirname(fresh.path))).toThrow(/ENOENT/);
    fresh.remove();
  });
});
