// run, compare and theory share the oracle's answers through the disk cache: a second process
// reads what the first solved, and a damaged or doctored entry is never trusted.
import { mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { createHash } from 'node:crypto';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { runCli } from './run-cli.js';

const dir = mkdtempSync(join(tmpdir(), 'roundwire-theory-cache-'));
const env = { ROUNDWIRE_CACHE_DIR: dir };
const args = ['theory', 'scenarios/quickstart.yaml', '--json'];

describe('the oracle cache across processes', () => {
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('writes an entry on the first theory and reads it on the second, with the same report', async () => {
    const first = await runCli(args, 60_000, env);
    expect(first.code).toBe(0);
    expect(first.stderr).toBe('');
    const files = readdirSync(dir);
    expect(files).toHaveLength(1);
    const second = await runCli(args, 60_000, env);
    expect(second.stderr).toBe('');
    expect(second.stdout).toBe(first.stdout);
  });

  it('ignores a corrupted entry with a warning and gives the same report', async () => {
    const reference = await runCli(args, 60_000, env);
    const file = join(dir, readdirSync(dir)[0]);
    writeFileSync(file, readFileSync(file, 'utf8').replace('"loss":', '"loss": '));
    const r = await runCli(args, 60_000, env);
    expect(r.code).toBe(0);
    expect(r.stderr).toMatch(
      /^roundwire: warning: ignoring the oracle cache entry .*hash does not match/,
    );
    expect(r.stdout).toBe(reference.stdout);
  });

  it('recomputes the certificate of an entry whose hash matches: a doctored x* is solved again', async () => {
    const reference = await runCli(args, 60_000, env);
    const file = join(dir, readdirSync(dir)[0]);
    const [headerLine, body] = readFileSync(file, 'utf8').split('\n');
    const entry = JSON.parse(body);
    entry.optimum.x[0] += 1e-3;
    const doctored = JSON.stringify(entry);
    const header = JSON.parse(headerLine);
    header.bodySha256 = createHash('sha256').update(doctored).digest('hex');
    writeFileSync(file, `${JSON.stringify(header)}\n${doctored}`);
    const r = await runCli(args, 60_000, env);
    expect(r.code).toBe(0);
    expect(r.stderr).toMatch(/fails its certificate/);
    expect(JSON.parse(r.stdout).optimum.x).toEqual(JSON.parse(reference.stdout).optimum.x);
  });
});
