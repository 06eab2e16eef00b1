// Inputs that used to crash or run without bound, as a user meets them (the built binary): each
// ends at once with exit code 2 and one line that names the reason.
import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { createServer, type Server } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { runCli, type CliResult } from './run-cli.js';
import {
  SCENARIO_TEXT_BYTES_MAX,
  SCENARIO_YAML_ALIASES_MAX,
} from '../../src/scenario/scenario-limits.js';

const root = mkdtempSync(join(tmpdir(), 'roundwire-inputs-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));

/** Exit code 2 and exactly one line on stderr, matching `pattern`. */
function expectOneLineBadInput(r: CliResult, pattern: RegExp): void {
  expect(r.code, r.stderr).toBe(2);
  const lines = r.stderr.trimEnd().split('\n');
  expect(lines, r.stderr).toHaveLength(1);
  expect(lines[0]).toMatch(pattern);
}

/** A TCP server holding a port on 127.0.0.1 (the OS picks it), so that another listen there fails. */
async function occupyPort(): Promise<{ port: number; server: Server }> {
  const server = createServer();
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  const address = server.address();
  if (address === null || typeof address === 'string') throw new Error('no TCP address');
  return { port: address.port, server };
}

describe('scenario text', () => {
  it('refuses nested YAML aliases (a "billion laughs" document) by the alias limit', async () => {
    // Nine aliases per level, seven levels: 9^7 nodes once expanded (common practice for this attack).
    const levels = ['a: &a [x, x, x, x, x, x, x, x, x]'];
    for (let i = 1; i < 7; i++) {
      const previous = String.fromCharCode(96 + i);
      const name = String.fromCharCode(97 + i);
      levels.push(`${name}: &${name} [${Array(9).fill(`*${previous}`).join(', ')}]`);
    }
    const file = join(root, 'bomb.yaml');
    writeFileSync(file, `${levels.join('\n')}\n`);
    const r = await runCli(['theory', file], 20_000);
    expectOneLineBadInput(
      r,
      new RegExp(
        `bomb\\.yaml: unusable YAML aliases: .*at most ${SCENARIO_YAML_ALIASES_MAX} alias expansions`,
      ),
    );
  });

  it('stops reading /dev/zero at the size limit', async () => {
    const r = await runCli(['run', '/dev/zero', '--in-process'], 20_000);
    expectOneLineBadInput(r, new RegExp(`/dev/zero: larger than ${SCENARIO_TEXT_BYTES_MAX} bytes`));
  });
});

describe('--out that cannot be written ends the command before the run', () => {
  // A folder under a regular file cannot be created, whoever runs the test (root included).
  const blocker = join(root, 'a-file');
  writeFileSync(blocker, 'not a folder\n');
  const out = join(blocker, 'results');
  const outLine = new RegExp(
    `^roundwire: --out ${out.replace(/[/.]/g, '\\$&')}: cannot create or write the results folder \\(ENOTDIR\\)$`,
  );

  it('run', async () => {
    expectOneLineBadInput(
      await runCli(['run', 'scenarios/quickstart.yaml', '--out', out], 20_000),
      outLine,
    );
  });

  it('run --in-process', async () => {
    expectOneLineBadInput(
      await runCli(['run', 'scenarios/quickstart.yaml', '--in-process', '--out', out], 20_000),
      outLine,
    );
  });

  it('coordinator (before it listens)', async () => {
    const r = await runCli(
      ['coordinator', 'scenarios/quickstart.yaml', '--listen', '127.0.0.1:0', '--out', out],
      20_000,
    );
    expectOneLineBadInput(r, outLine);
  });

  it('compare', async () => {
    const r = await runCli(
      ['compare', 'scenarios/quickstart.yaml', '--ladder', 'method.localSteps:1/2', '--out', out],
      20_000,
    );
    expectOneLineBadInput(r, outLine);
  });
});

describe('a busy port', () => {
  it('--listen names the address', async () => {
    const { port, server } = await occupyPort();
    try {
      const r = await runCli(
        [
          'coordinator',
          'scenarios/quickstart.yaml',
          '--listen',
          `127.0.0.1:${port}`,
          '--out',
          join(root, 'listen'),
        ],
        20_000,
      );
      expectOneLineBadInput(
        r,
        new RegExp(
          `^roundwire: --listen 127\\.0\\.0\\.1:${port}: cannot listen: .*\\(EADDRINUSE\\)$`,
        ),
      );
    } finally {
      server.close();
    }
  });

  it('--metrics names the address (coordinator and run)', async () => {
    const { port, server } = await occupyPort();
    try {
      const line = new RegExp(
        `^roundwire: --metrics 127\\.0\\.0\\.1:${port}: cannot listen: .*\\(EADDRINUSE\\)$`,
      );
      const coordinator = await runCli(
        [
          'coordinator',
          'scenarios/quickstart.yaml',
          '--listen',
          '127.0.0.1:0',
          '--metrics',
          `127.0.0.1:${port}`,
          '--out',
          join(root, 'metrics-c'),
        ],
        20_000,
      );
      expectOneLineBadInput(coordinator, line);
      const run = await runCli(
        [
          'run',
          'scenarios/quickstart.yaml',
          '--metrics',
          `127.0.0.1:${port}`,
          '--out',
          join(root, 'metrics-r'),
        ],
        20_000,
      );
      expectOneLineBadInput(run, line);
    } finally {
      server.close();
    }
  });
});
