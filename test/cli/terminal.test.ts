// Terminal manners: a redrawn progress line on a TTY (util-linux `script` gives the process a
// real pseudo-terminal), plain lines without escape codes when piped.
import { describe, expect, it } from 'vitest';
import { execFile } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { repoRoot, runCli } from './run-cli.js';

function runOnTty(command: string, timeoutMs = 60_000): Promise<string> {
  return new Promise((resolve, reject) => {
    execFile(
      'script',
      ['-qec', command, '/dev/null'],
      { cwd: repoRoot, timeout: timeoutMs, env: { ...process.env, TERM: 'xterm' } },
      (error, stdout) => {
        if (error) reject(error);
        else resolve(stdout);
      },
    );
  });
}

describe('progress display', () => {
  it('redraws one line in place on a terminal and ends it before the table', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'roundwire-tty-'));
    try {
      const out = await runOnTty(
        `${process.execPath} bin/roundwire.js run scenarios/quickstart.yaml --in-process --out ${dir}`,
      );
      expect(out).toContain('\r\x1b[2Kround ');
      expect(out).toMatch(
        /round \d+\/150 {2}f-f\* \S+ {2}payload [\d.]+ \w+ {2}virtual \S+ s {2}eta [\d.]+ s/,
      );
      expect(out).toMatch(/\r?\nquickstart: fedlin, \d+ rounds \(target-reached\)/);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('prints plain lines with no escape codes when not a terminal', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'roundwire-plain-'));
    try {
      const r = await runCli(['run', 'scenarios/quickstart.yaml', '--in-process', '--out', dir]);
      expect(r.code).toBe(0);
      expect(r.stderr).not.toMatch(/\x1b/);
      expect(r.stdout).not.toMatch(/\x1b/);
      const lines = r.stderr.trim().split('\n');
      expect(lines.length).toBeGreaterThan(1);
      expect(lines.length).toBeLessThanOrEqual(21);
      for (const line of lines) expect(line).toMatch(/^round \d+\/150 /);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
