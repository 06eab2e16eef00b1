// `roundwire worker` refuses bad input before it connects: exit code 2 (src/commands/exit-codes.ts)
// and one line naming the argument or option. Every case ends before connecting, so the
// coordinator address given (port 9 on 127.0.0.1) is never reached.

import { describe, expect, it } from 'vitest';
import { freshDir, writeKeyFile } from '../integration/cli-process.js';
import { runCli } from './run-cli.js';

const URL_NOWHERE = 'ws://127.0.0.1:9';
const KEY = 'a-key-for-the-worker-argument-test';

async function refusal(
  args: string[],
  env: NodeJS.ProcessEnv = { ROUNDWIRE_KEY_FILE: '' },
): Promise<string> {
  const result = await runCli(['worker', ...args], 30_000, env);
  expect(result.code, result.stderr).toBe(2);
  const lines = result.stderr.trim().split('\n');
  expect(lines, result.stderr).toHaveLength(1);
  return lines[0];
}

describe('roundwire worker', () => {
  it('needs a key file, from --key-file or ROUNDWIRE_KEY_FILE', async () => {
    expect(await refusal([URL_NOWHERE])).toBe(
      'roundwire: a key file is needed: --key-file PATH, or ROUNDWIRE_KEY_FILE naming the file',
    );
  });

  it('refuses a key file open to other users, and one too short', async () => {
    const dir = freshDir('worker-args');
    const open = writeKeyFile(dir, KEY, 'open.key', 0o640);
    expect(await refusal([URL_NOWHERE, '--key-file', open])).toBe(
      `roundwire: --key-file: ${open} is open to other users (mode 640); make it private with chmod 600 ${open}`,
    );
    const short = writeKeyFile(dir, 'short', 'short.key');
    expect(await refusal([URL_NOWHERE], { ROUNDWIRE_KEY_FILE: short })).toBe(
      `roundwire: ROUNDWIRE_KEY_FILE: ${short} holds a 5-byte key, at least 16 bytes expected; write a longer random one`,
    );
  });

  it('refuses a capacity that is not a whole number from 1 to 10000', async () => {
    const key = writeKeyFile(freshDir('worker-capacity'), KEY);
    const capacities = ['four', '0', '2.5', '10001'];
    const lines = await Promise.all(
      capacities.map((capacity) =>
        refusal([URL_NOWHERE, '--key-file', key, '--capacity', capacity]),
      ),
    );
    expect(lines).toEqual(
      capacities.map(
        (capacity) =>
          `roundwire: --capacity: expected an integer from 1 to 10000, got "${capacity}"`,
      ),
    );
  }, 90_000);

  it('refuses a coordinator address that is not a ws:// or wss:// URL, and a missing one', async () => {
    const key = writeKeyFile(freshDir('worker-url'), KEY);
    const urls = ['127.0.0.1:7070', 'http://127.0.0.1:7070', 'ws://', 'ws://127.0.0.1:99999'];
    const lines = await Promise.all(urls.map((url) => refusal([url, '--key-file', key])));
    expect(lines).toEqual(
      urls.map(
        (url) =>
          `roundwire: coordinator-url: expected ws://HOST:PORT or wss://HOST:PORT, got "${url}"`,
      ),
    );
    const missing = await runCli(['worker', '--key-file', key], 30_000);
    expect(missing.code).toBe(2);
    expect(missing.stderr).toMatch(/missing required argument 'coordinator-url'/);
  }, 90_000);

  it('refuses a join wait longer than a day', async () => {
    const key = writeKeyFile(freshDir('worker-join-wait'), KEY);
    expect(await refusal([URL_NOWHERE, '--key-file', key, '--join-wait-seconds', '86401'])).toBe(
      'roundwire: --join-wait-seconds: expected seconds from 0 to 86400, got "86401"',
    );
  }, 30_000);
});
