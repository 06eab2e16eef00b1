// The README's commands work as written. Every indented line of README.md that runs `npx
// roundwire ...` (with its continuation lines) is run from a scratch folder holding a copy of the
// bundled scenarios, with `npx roundwire` meaning this checkout's CLI. The laptop-cluster pair is
// run together, coordinator first, on 127.0.0.1 with a free port in place of the example's
// 0.0.0.0:7070 and HOST (tests talk only to loopback); everything else runs exactly as printed.

import { execFileSync, spawn } from 'node:child_process';
import { cpSync, existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { CliProcess, repoRoot } from './cli-process.js';

const readme = readFileSync(join(repoRoot, 'README.md'), 'utf8');
const cli = join(repoRoot, 'bin/roundwire.js');

/** Indented command lines, continuation lines joined, comments after `#` dropped. */
function readmeCommands(): string[] {
  const out: string[] = [];
  let pending = '';
  for (const line of readme.split('\n')) {
    if (!line.startsWith('    ')) {
      pending = '';
      continue;
    }
    const text = line.trim();
    const joined = pending + text;
    if (joined.endsWith('\\')) {
      pending = `${joined.slice(0, -1).trim()} `;
      continue;
    }
    pending = '';
    const command = joined.replace(/\s+#\s.*$/, '').replace(/^npm ci && /, '');
    if (command.startsWith('npx roundwire ')) out.push(command);
  }
  return out;
}

/** Splits a shell line into words: single and double quotes group, as sh reads them here. */
function words(command: string): string[] {
  return [...command.matchAll(/'([^']*)'|"([^"]*)"|(\S+)/g)].map((m) => m[1] ?? m[2] ?? m[3]);
}

async function freePort(): Promise<number> {
  const server = createServer();
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  const port = (server.address() as { port: number }).port;
  await new Promise<void>((resolve) => server.close(() => resolve()));
  return port;
}

const scratch = mkdtempSync(join(tmpdir(), 'rw-readme-'));
cpSync(join(repoRoot, 'scenarios'), join(scratch, 'scenarios'), { recursive: true });
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

function runPrinted(command: string): { status: number; stdout: string; stderr: string } {
  const args = words(command).slice(2);
  try {
    const stdout = execFileSync(process.execPath, [cli, ...args], {
      cwd: scratch,
      encoding: 'utf8',
      stdio: ['ignore', 'pipe', 'pipe'],
      timeout: 90_000,
    });
    return { status: 0, stdout, stderr: '' };
  } catch (error) {
    const e = error as { status: number | null; stdout: string; stderr: string };
    return { status: e.status ?? -1, stdout: e.stdout, stderr: e.stderr };
  }
}

const commands = readmeCommands();
const cluster = commands.filter((c) => /^npx roundwire (coordinator|worker) /.test(c));
const standalone = commands.filter((c) => !cluster.includes(c));

describe('README commands, as written', () => {
  it('finds the commands the README teaches, in the new spellings only', () => {
    expect(standalone.length).toBeGreaterThanOrEqual(8);
    expect(cluster).toHaveLength(2);
    for (const c of commands) expect(c).not.toMatch(/--(vary|set|join|token|slots)\b/);
  });

  // In the README's order: later commands read what earlier ones wrote (results/first).
  it('every stand-alone command exits 0 and writes what the README says', () => {
    for (const command of standalone) {
      const r = runPrinted(command);
      expect(r.status, `${command}\n${r.stderr}`).toBe(0);
    }
    expect(existsSync(join(scratch, 'results/first/report.html'))).toBe(true);
    expect(existsSync(join(scratch, 'results/first/outcome.json'))).toBe(true);
    expect(existsSync(join(scratch, 'results/compression/compare.html'))).toBe(true);
    expect(existsSync(join(scratch, 'shards'))).toBe(true);
  }, 240_000);

  it('the laptop-cluster commands: the key file, a coordinator and two workers finish the run', async () => {
    const keyLine = readme.split('\n').find((l) => l.includes('> roundwire.key'));
    expect(keyLine).toBeDefined();
    execFileSync('sh', ['-c', keyLine!.trim()], { cwd: scratch });
    const port = await freePort();
    const [coordinatorLine, workerLine] = [
      cluster.find((c) => c.includes(' coordinator '))!,
      cluster.find((c) => c.includes(' worker '))!,
    ];
    const coordinatorArgs = words(
      coordinatorLine.replace('0.0.0.0:7070', `127.0.0.1:${port}`),
    ).slice(2);
    const workerArgs = words(workerLine.replace('HOST:7070', `127.0.0.1:${port}`)).slice(2);
    const coordinator = new CliProcess(
      [...coordinatorArgs, '--out', join(scratch, 'cluster')],
      {},
      scratch,
    );
    const workers: ReturnType<typeof spawn>[] = [];
    try {
      await coordinator.waitForStderr(/listening on/, 30_000);
      for (let i = 0; i < 2; i++)
        workers.push(
          spawn(process.execPath, [cli, ...workerArgs], { cwd: scratch, stdio: 'ignore' }),
        );
      const exit = await coordinator.exit(90_000);
      expect(exit.code, coordinator.stderr).toBe(0);
      expect(
        JSON.parse(readFileSync(join(scratch, 'cluster/outcome.json'), 'utf8')).stopReason,
      ).toBe('target-reached');
    } finally {
      coordinator.kill();
      for (const w of workers) w.kill('SIGKILL');
    }
  }, 120_000);
});
