// The wall clock runs the quickstart end to end with real sleeps (DESIGN.md, Timing: clocks)
// and records, per client per exchange, the compute, wait and transfer seconds it spent.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { ClientRoundRecord } from '../../src/engine/round-record.js';
import { CliProcess, freshDir, readJsonLines, repoRoot } from './cli-process.js';

describe('wall clock', () => {
  it('runs the quickstart in seconds and records compute, wait and transfer per client', async () => {
    const out = freshDir('wall');
    const cli = new CliProcess([
      'run',
      join(repoRoot, 'scenarios/quickstart.yaml'),
      '--out',
      out,
      '--tweak',
      'timing.clock:wall',
    ]);
    try {
      const exit = await cli.exit(50_000);
      expect(exit.code, cli.stderr).toBe(0);
    } finally {
      cli.kill();
    }
    const summary = JSON.parse(readFileSync(join(out, 'outcome.json'), 'utf8')) as {
      clock: string;
      seconds: { wall: number; virtual: number };
    };
    expect(summary.clock).toBe('wall');
    expect(summary.seconds.wall).toBeLessThan(30);
    const records = readJsonLines<ClientRoundRecord>(join(out, 'clients.jsonl'));
    expect(new Set(records.map((r) => r.clientId)).size).toBe(8);
    for (const r of records) {
      // A step lasts at least the scenario's stepCostSeconds (0.001 s by default) on the wall clock.
      expect(r.computeSeconds).toBeGreaterThanOrEqual(0.001 * r.localSteps);
      expect(r.waitSeconds).toBeGreaterThanOrEqual(0);
      // Default links: no latency, 1e9 bytes per second; a down and an up of 160 payload bytes
      // each, priced as frames of their own (src/engine/own-frame-bytes.ts): the payload plus
      // the codec's and the RFC 6455 headers, under 100 bytes a frame at this size.
      const payloadBytes = r.bytes.payload.up + r.bytes.payload.down;
      expect(r.transferSeconds).toBeGreaterThan(payloadBytes / 1e9);
      expect(r.transferSeconds).toBeLessThan((payloadBytes + 200) / 1e9);
    }
  }, 60_000);
});
