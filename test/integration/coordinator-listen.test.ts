// The coordinator refuses to listen beyond loopback without a key file: anyone who can reach the
// port could join and read the plan. A key file that cannot serve ends it before it listens.
// Bad input both, so exit code 2 (src/commands/exit-codes.ts) and one line naming the option or
// variable. No test here gets as far as listening.

import { describe, expect, it } from 'vitest';
import { runCli } from '../cli/run-cli.js';
import { freshDir, writeKeyFile } from './cli-process.js';

const KEY = 'a-key-for-the-listen-test';

function lastLine(stderr: string): string {
  return stderr.trim().split('\n').at(-1) ?? '';
}

describe('roundwire coordinator --listen', () => {
  it('exits 2 with a clear message on 0.0.0.0 without a key file', async () => {
    const result = await runCli(
      ['coordinator', 'scenarios/quickstart.yaml', '--listen', '0.0.0.0:0'],
      30_000,
      { ROUNDWIRE_KEY_FILE: '' },
    );
    expect(result.code).toBe(2);
    expect(result.stderr).toMatch(
      /refusing to listen on 0\.0\.0\.0 without a key file: .*Give --key-file PATH \(or ROUNDWIRE_KEY_FILE\), or listen on 127\.0\.0\.1/,
    );
    expect(result.stderr.trim().split('\n')).toHaveLength(1);
  });

  it('exits 2 before listening when --key-file is open to other users', async () => {
    const file = writeKeyFile(freshDir('listen-open'), KEY, 'shared.key', 0o644);
    const result = await runCli(
      ['coordinator', 'scenarios/quickstart.yaml', '--listen', '127.0.0.1:0', '--key-file', file],
      30_000,
      { ROUNDWIRE_KEY_FILE: '' },
    );
    expect(result.code).toBe(2);
    expect(lastLine(result.stderr)).toBe(
      `roundwire: --key-file: ${file} is open to other users (mode 644); make it private with chmod 600 ${file}`,
    );
    expect(result.stderr).not.toMatch(/listening on/);
  });

  it('exits 2 naming ROUNDWIRE_KEY_FILE when the file it names holds too short a key', async () => {
    const file = writeKeyFile(freshDir('listen-short'), 'fifteen-bytes!!');
    const result = await runCli(
      ['coordinator', 'scenarios/quickstart.yaml', '--listen', '127.0.0.1:0'],
      30_000,
      { ROUNDWIRE_KEY_FILE: file },
    );
    expect(result.code).toBe(2);
    expect(lastLine(result.stderr)).toBe(
      `roundwire: ROUNDWIRE_KEY_FILE: ${file} holds a 15-byte key, at least 16 bytes expected; write a longer random one`,
    );
    expect(result.stderr).not.toMatch(/listening on|key file: /);
  });

  it('exits 2 naming --key-file when the file is missing', async () => {
    const result = await runCli(
      [
        'coordinator',
        'scenarios/quickstart.yaml',
        '--listen',
        '127.0.0.1:0',
        '--key-file',
        '/nonexistent/roundwire.key',
      ],
      30_000,
    );
    expect(result.code).toBe(2);
    expect(lastLine(result.stderr)).toBe(
      'roundwire: --key-file: cannot read /nonexistent/roundwire.key (ENOENT)',
    );
  });
});
