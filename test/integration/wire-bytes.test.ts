// Wire bytes are the socket's own counters; encoded bytes are the codec's frame lengths. Every
// message travels as one unfragmented, uncompressed WebSocket frame, so for each frame
// wire = encoded + the RFC 6455 section 5.2 header: 2 bytes, +2 or +8 for an extended length,
// +4 for the masking key a client must use (section 5.3). On the virtual clock each worker sends
// and receives one round frame per exchange, whose bytes its clients share (server/byte-ledger.ts):
// so per worker, round and exchange, the clients' wire bytes are their encoded bytes plus one
// header for the frame they share. Checked so and in total against the sockets' counters, for
// dense messages and for top-k sparse uplinks.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { frameHeaderBytes } from '../../src/protocol/framing.js';
import type { ClientRoundRecord } from '../../src/engine/round-record.js';
import { CliProcess, freshDir, readJsonLines, repoRoot } from './cli-process.js';

interface SummaryBytes {
  bytes: {
    payload: { up: number; down: number };
    encoded: { up: number; down: number };
    wire: { up: number; down: number };
  };
  distributed: {
    controlBytes: { wire: { up: number; down: number } };
    socketBytes: { up: number; down: number };
    workers: { workerName: string; clientIds: number[] }[];
  };
}

async function runAndRead(
  name: string,
  tweaks: string[],
): Promise<{ records: ClientRoundRecord[]; summary: SummaryBytes }> {
  const out = freshDir(name);
  const run = new CliProcess([
    'run',
    join(repoRoot, 'scenarios/quickstart.yaml'),
    '--out',
    out,
    '--tweak',
    'run.rounds:4',
    '--tweak',
    'run.workers:2',
    ...tweaks.flatMap((o) => ['--tweak', o]),
  ]);
  try {
    const exit = await run.exit(50_000);
    expect(exit.code, run.stderr).toBe(0);
  } finally {
    run.kill();
  }
  return {
    records: readJsonLines<ClientRoundRecord>(join(out, 'clients.jsonl')),
    summary: JSON.parse(readFileSync(join(out, 'outcome.json'), 'utf8')) as SummaryBytes,
  };
}

function checkFraming(records: readonly ClientRoundRecord[], summary: SummaryBytes): void {
  expect(records.length).toBeGreaterThan(0);
  const workerOf = new Map<number, string>();
  for (const w of summary.distributed.workers)
    for (const id of w.clientIds) workerOf.set(id, w.workerName);
  const frames = new Map<
    string,
    { encoded: { up: number; down: number }; wire: { up: number; down: number } }
  >();
  for (const r of records) {
    const key = `${r.round}/${r.exchange}/${workerOf.get(r.clientId)}`;
    const frame = frames.get(key) ?? { encoded: { up: 0, down: 0 }, wire: { up: 0, down: 0 } };
    for (const d of ['up', 'down'] as const) {
      frame.encoded[d] += r.bytes.encoded![d];
      frame.wire[d] += r.bytes.wire![d];
    }
    frames.set(key, frame);
  }
  let headerUp = 0;
  let headerDown = 0;
  for (const { encoded, wire } of frames.values()) {
    // The coordinator sends unmasked frames; workers, as WebSocket clients, mask theirs.
    expect(wire.down).toBe(encoded.down + frameHeaderBytes(encoded.down, false));
    expect(wire.up).toBe(encoded.up + frameHeaderBytes(encoded.up, true));
    headerUp += frameHeaderBytes(encoded.up, true);
    headerDown += frameHeaderBytes(encoded.down, false);
  }
  // Two workers, each one frame per exchange each way.
  expect(new Set([...frames.keys()].map((k) => k.split('/')[2])).size).toBe(2);
  const { bytes, distributed } = summary;
  expect(bytes.wire.up).toBe(bytes.encoded.up + headerUp);
  expect(bytes.wire.down).toBe(bytes.encoded.down + headerDown);
  // Round traffic plus control traffic is everything the sockets counted after the upgrade.
  expect(distributed.socketBytes.up).toBe(bytes.wire.up + distributed.controlBytes.wire.up);
  expect(distributed.socketBytes.down).toBe(bytes.wire.down + distributed.controlBytes.wire.down);
}

describe('wire bytes = encoded bytes + RFC 6455 headers, from the sockets', () => {
  it('dense messages', async () => {
    const { records, summary } = await runAndRead('wire-dense', []);
    checkFraming(records, summary);
  }, 60_000);

  it('a round thrown away at the target: its frames crossed, so the totals hold them, the records do not', async () => {
    // The coordinator overlaps round r's evaluation with round r + 1's first exchange (virtual
    // clock) and throws that round away when the evaluation reaches the target (round-walk.ts).
    const { records, summary } = await runAndRead('wire-target', [
      'run.rounds:150',
      'run.target:1e-3',
    ]);
    const outcome = summary as SummaryBytes & { stopReason: string; rounds: number };
    expect(outcome.stopReason).toBe('target-reached');
    const last = Math.max(...records.map((r) => r.round));
    expect(last).toBe(outcome.rounds);
    const recorded = { up: 0, down: 0 };
    for (const r of records) {
      recorded.up += r.bytes.wire!.up;
      recorded.down += r.bytes.wire!.down;
    }
    // The thrown-away round's downs and ups (its first exchange) went over the sockets.
    expect(summary.bytes.wire.down).toBeGreaterThan(recorded.down);
    expect(summary.bytes.wire.up).toBeGreaterThan(recorded.up);
    const { distributed } = summary;
    expect(distributed.socketBytes.up).toBe(
      summary.bytes.wire.up + distributed.controlBytes.wire.up,
    );
    expect(distributed.socketBytes.down).toBe(
      summary.bytes.wire.down + distributed.controlBytes.wire.down,
    );
  }, 60_000);

  it('sparse top-k uplink messages', async () => {
    const { records, summary } = await runAndRead('wire-sparse', [
      'compression.uplink.default:{kind: top-k, fraction: 0.25}',
      'method.name:fedavg',
    ]);
    checkFraming(records, summary);
    // A quarter of 20 entries, at 8 bytes a value plus an index byte each, against 160 dense.
    const ups = records.map((r) => r.bytes.payload.up);
    expect(Math.max(...ups)).toBeLessThan(20 * 8);
  }, 60_000);
});
