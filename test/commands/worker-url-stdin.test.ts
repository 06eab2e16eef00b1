// `roundwire worker -` reads the coordinator's URL as one line from standard input: `run`
// starts its local workers that way before its coordinator listens. The line reader takes the
// first line, trimmed; refuses an input that ends first, a line over its byte limit and a wait
// past its time limit, each with a reason; and the command exits 2 (bad input) on such input,
// with the reason, as it does for a bad URL argument.

import { spawn } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PassThrough } from 'node:stream';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { readUrlLine, URL_LINE_BYTES_MAX } from '../../src/commands/worker-command.js';

const bin = fileURLToPath(new URL('../../bin/roundwire.js', import.meta.url));

describe('readUrlLine', () => {
  it('takes the first line, trimmed, even when it comes in pieces', async () => {
    const input = new PassThrough();
    const line = readUrlLine(input);
    input.write('  ws://127.0.0.1:');
    input.write('7070\r\nws://elsewhere:1\n');
    await expect(line).resolves.toBe('ws://127.0.0.1:7070');
  });

  it('takes a last line without its line end when the input ends', async () => {
    const input = new PassThrough();
    const line = readUrlLine(input);
    input.end('ws://127.0.0.1:7071');
    await expect(line).resolves.toBe('ws://127.0.0.1:7071');
  });

  it('refuses an input that ends before a line, a line too long, and no line in time', async () => {
    const empty = new PassThrough();
    const ended = readUrlLine(empty);
    empty.end();
    await expect(ended).rejects.toThrow(/ended before a line/);
    const long = new PassThrough();
    const tooLong = readUrlLine(long);
    long.write('x'.repeat(URL_LINE_BYTES_MAX + 1));
    await expect(tooLong).rejects.toThrow(/longer than 2048 bytes/);
    await expect(readUrlLine(new PassThrough(), 0.05)).rejects.toThrow(
      /no line on standard input within 0.05 s/,
    );
  });
});

describe('roundwire worker -', () => {
  it('exits 2 with the reason when its standard input holds no URL', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'roundwire-worker-stdin-'));
    try {
      const keyFile = join(dir, 'key');
      writeFileSync(keyFile, 'a shared key of enough bytes', { mode: 0o600 });
      for (const [input, reason] of [
        ['', /ended before a line/],
        ['http://127.0.0.1:7070\n', /expected ws:\/\/HOST:PORT or wss:\/\/HOST:PORT, got "http/],
      ] as const) {
        const child = spawn(process.execPath, [bin, 'worker', '-', '--key-file', keyFile], {
          stdio: ['pipe', 'ignore', 'pipe'],
        });
        let stderr = '';
        child.stderr.on('data', (chunk: Buffer) => (stderr += chunk.toString()));
        const timer = setTimeout(() => child.kill('SIGKILL'), 20_000);
        child.stdin.end(input);
        const code = await new Promise<number | null>((resolve) => child.on('exit', resolve));
        clearTimeout(timer);
        expect(code).toBe(2);
        expect(stderr).toMatch(reason);
      }
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  }, 45_000);
});
