// `roundwire coordinator` refuses a bad number option before it reads the scenario or listens:
// exit code 2 (src/commands/exit-codes.ts) and one line naming the option. The listen address
// is loopback with port 0, never bound since every case stops first.

import { describe, expect, it } from 'vitest';
import { runCli } from './run-cli.js';

const cases: [string, string, string][] = [
  ['--workers-min', '0', '--workers-min: expected an integer from 1 to 10000, got "0"'],
  [
    '--workers-wait-seconds',
    'soon',
    '--workers-wait-seconds: expected seconds more than 0, at most 604800, got "soon"',
  ],
  [
    '--resume-grace-seconds',
    '-1',
    '--resume-grace-seconds: expected seconds from 0 to 3600, got "-1"',
  ],
  ['--metrics-linger', '86401', '--metrics-linger: expected seconds from 0 to 86400, got "86401"'],
];

describe('roundwire coordinator number options', () => {
  it('exit 2 with one line naming the option, its range and the value', async () => {
    const results = await Promise.all(
      cases.map(([option, value]) =>
        runCli(
          ['coordinator', 'scenarios/quickstart.yaml', '--listen', '127.0.0.1:0', option, value],
          30_000,
        ),
      ),
    );
    results.forEach((result, i) => {
      expect(result.code, result.stderr).toBe(2);
      expect(result.stderr.trim().split('\n')).toEqual([`roundwire: ${cases[i][2]}`]);
    });
  }, 90_000);
});
