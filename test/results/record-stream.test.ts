// The record stream: rounds.jsonl and clients.jsonl appended round by round, in the line format
// README.md ("Results folder") describes (one JSON object per line, ending in a line break), one
// write per file per round, reopened at a checkpoint's offsets; and the rounds read back in
// chunks.
import { afterAll, beforeEach, describe, expect, it, vi } from 'vitest';
import * as fs from 'node:fs';
import { mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { RecordStream } from '../../src/results/record-stream.js';
import { readLines, readRoundRecords } from '../../src/results/record-lines.js';
import { ResultsFolderError } from '../../src/results/results-folder.js';
import type { ClientRoundRecord, RoundRecord } from '../../src/engine/round-record.js';
import { codeOf } from '../support/error-code.js';

const writes = vi.hoisted(() => ({ calls: [] as number[] }));
vi.mock('node:fs', async (importOriginal) => {
  const original = await importOriginal<typeof import('node:fs')>();
  return {
    ...original,
    writeSync: (fd: number, ...rest: unknown[]) => {
      writes.calls.push(fd);
      return (original.writeSync as (...args: unknown[]) => number)(fd, ...rest);
    },
  };
});

const root = mkdtempSync(join(tmpdir(), 'roundwire-record-stream-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));
beforeEach(() => {
  writes.calls.length = 0;
});

function roundRecord(round: number): RoundRecord {
  return {
    round,
    suboptimality: round % 2 === 0 ? 1 / (round + 1) : null,
    distance: round % 2 === 0 ? 2 / (round + 1) : null,
    predictedSuboptimality: round % 2 === 0 ? 1 / (round + 2) : null,
    bytes: { payload: { up: 10 * round, down: 20 * round } },
    localSteps: round === 0 ? {} : { '0': 3, '1': 5 },
    dropped: round === 2 ? [1] : [],
    roundSeconds: 0.5,
    virtualSeconds: 0.5 * round,
    wallSeconds: 0.01 * round,
  };
}

function clientRecords(round: number): ClientRoundRecord[] {
  if (round === 0) return [];
  return [0, 1].map((clientId) => ({
    round,
    exchange: 'local',
    clientId,
    localSteps: 3 + 2 * clientId,
    computeSeconds: 0.1,
    waitSeconds: 0.2,
    transferSeconds: 0.05,
    bytes: { payload: { up: 5 * round, down: 10 * round } },
    dropped: round === 2 && clientId === 1,
  }));
}

/** What rounds.jsonl and clients.jsonl hold for these records: one JSON line each. */
function linesOf(items: readonly unknown[]): string {
  return items.map((item) => `${JSON.stringify(item)}\n`).join('');
}

function appendRounds(stream: RecordStream, from: number, to: number): void {
  for (let round = from; round <= to; round++)
    stream.append(roundRecord(round), clientRecords(round));
}

describe('RecordStream', () => {
  it('appends one line per round and per client record, as they come, with one write per file per round', () => {
    const dir = join(root, 'create');
    const stream = RecordStream.create(dir);
    appendRounds(stream, 0, 0);
    // Round 0 has no clients: one write, to rounds.jsonl only.
    expect(writes.calls).toHaveLength(1);
    expect(readFileSync(join(dir, 'rounds.jsonl'), 'utf8')).toBe(linesOf([roundRecord(0)]));
    expect(readFileSync(join(dir, 'clients.jsonl'), 'utf8')).toBe('');
    appendRounds(stream, 1, 3);
    expect(writes.calls).toHaveLength(1 + 2 * 3);
    const rounds = [0, 1, 2, 3].map(roundRecord);
    const clients = [0, 1, 2, 3].flatMap(clientRecords);
    // On disk before close: a crash loses at most the round in progress.
    expect(readFileSync(join(dir, 'rounds.jsonl'), 'utf8')).toBe(linesOf(rounds));
    expect(readFileSync(join(dir, 'clients.jsonl'), 'utf8')).toBe(linesOf(clients));
    expect(stream.offsets()).toEqual({
      roundsBytes: statSync(join(dir, 'rounds.jsonl')).size,
      clientsBytes: statSync(join(dir, 'clients.jsonl')).size,
    });
    stream.sync();
    stream.close();
    expect(() => stream.append(roundRecord(4), [])).toThrow(/closed/);
  });

  it('reopens at a checkpoint: truncates to its offsets and appends from there', () => {
    const dir = join(root, 'reopen');
    const first = RecordStream.create(dir);
    appendRounds(first, 0, 2);
    const checkpoint = first.offsets();
    appendRounds(first, 3, 5);
    first.close();
    const again = RecordStream.reopen(dir, checkpoint);
    expect(again.offsets()).toEqual(checkpoint);
    appendRounds(again, 3, 4);
    again.close();
    const rounds = [0, 1, 2, 3, 4].map(roundRecord);
    expect(readFileSync(join(dir, 'rounds.jsonl'), 'utf8')).toBe(linesOf(rounds));
    expect(readFileSync(join(dir, 'clients.jsonl'), 'utf8')).toBe(
      linesOf(rounds.flatMap((r) => clientRecords(r.round))),
    );
  });

  it('refuses offsets past the end of the files, and a folder it cannot create, with E_RESULTS_FOLDER', () => {
    const dir = join(root, 'short');
    RecordStream.create(dir).close();
    expect(
      codeOf(() => RecordStream.reopen(dir, { roundsBytes: 10, clientsBytes: 0 }), ResultsFolderError),
    ).toBe('E_RESULTS_FOLDER');
    const file = join(root, 'a-file');
    writeFileSync(file, 'x');
    expect(codeOf(() => RecordStream.create(join(file, 'below')), ResultsFolderError)).toBe(
      'E_RESULTS_FOLDER',
    );
  });
});

describe('readRoundRecords', () => {
  it('reads the records back in file order', () => {
    const dir = join(root, 'read');
    const stream = RecordStream.create(dir);
    appendRounds(stream, 0, 6);
    stream.close();
    expect([...readRoundRecords(dir)]).toEqual([0, 1, 2, 3, 4, 5, 6].map(roundRecord));
  });

  it('keeps lines whole across its 1 MiB chunks, a UTF-8 character straddling a chunk end and an empty line included', () => {
    const file = join(root, 'long-lines.txt');
    // "é" is two bytes in UTF-8 (RFC 3629, section 3); placed so that it straddles byte 2^20.
    const first = `${'a'.repeat((1 << 20) - 1)}é${'b'.repeat(10)}`;
    const lines = [first, 'short', 'x'.repeat(3 << 20), '', 'last without a line break'];
    writeFileSync(file, lines.join('\n'));
    expect(fs.statSync(file).size).toBeGreaterThan(4 << 20);
    expect([...readLines(file)]).toEqual(lines);
  });
});
