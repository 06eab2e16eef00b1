// The comparison's picks and files. CSV follows RFC 4180 (section 2: CRLF line ends, fields
// with commas, quotes or line breaks quoted, quotes doubled); the rows are hand-made.
import { describe, expect, it } from 'vitest';
import type { RunSummary } from '../../src/engine/run-summary.js';
import type { RoundRecord } from '../../src/engine/round-record.js';
import { buildComparison, compareColumns, comparisonCsv, verdictLines } from '../../src/report/compare-table.js';
import type { Variant } from '../../src/report/compare-variants.js';

function outcome(label: string, reached: number | null, payload: number | null, virtualSeconds: number | null, clock: 'virtual' | 'wall' = 'virtual') {
  const variant: Variant = { index: 0, label, overrides: [], folderName: label };
  const summary = {
    clock, runtime: 'in-process', stopReason: reached === null ? 'rounds-complete' : 'target-reached', rounds: 10, roundsToTarget: reached,
    toTarget: { payloadBytes: payload, virtualSeconds, wallSeconds: virtualSeconds === null ? null : virtualSeconds * 10 },
    floor: { measured: null }, rate: { measured: 0.5, predicted: null }, droppedUpdates: 0,
  } as unknown as RunSummary;
  const rounds = Array.from({ length: 11 }, (_, r) => ({ round: r, bytes: { payload: { up: r === 0 ? 0 : 3, down: r === 0 ? 0 : 1 } } })) as RoundRecord[];
  return { variant, summary, rounds };
}

describe('buildComparison', () => {
  it('picks the least bytes and time among variants that reached the target; ties to the earlier', () => {
    const c = buildComparison('s', 1e-8, [], [outcome('a', null, null, null), outcome('b', 4, 900, 3), outcome('c', 6, 500, 3), outcome('d', 2, 500, 5)]);
    expect(c.cheapest).toEqual({ variant: 'c', value: 500 });
    expect(c.fastest).toEqual({ variant: 'b', value: 3 });
    // uplink bytes through the target round: 3 bytes a round in these records
    expect(c.rows.map((r) => r.uplinkPayloadBytesToTarget)).toEqual([null, 12, 18, 6]);
    expect(c.cheapestUplink).toEqual({ variant: 'd', value: 6 });
    expect(c.timeBasis).toBe('modelled');
  });

  it('uses wall seconds as soon as one variant ran on the wall clock, and says so', () => {
    const c = buildComparison('s', 1, [], [outcome('a', 1, 10, 2), outcome('b', 1, 10, 1, 'wall')]);
    expect(c.timeBasis).toBe('wall');
    expect(c.rows.map((r) => r.secondsToTarget)).toEqual([20, 10]);
    expect(verdictLines(c).at(-1)).toMatch(/^fastest by wall seconds to target: b/);
  });

  it('says when no variant reached the target', () => {
    const c = buildComparison('s', 1e-8, [], [outcome('a', null, null, null)]);
    expect(c.cheapest).toBeNull();
    expect(verdictLines(c)).toEqual(['none of the 1 variants reached the target 1.0000e-8']);
  });
});

describe('comparisonCsv', () => {
  it('writes a header of the JSON keys and quotes fields as RFC 4180 asks', () => {
    const c = buildComparison('s', 1, [], [outcome('name="x, y"', 1, 10, 2)]);
    const lines = comparisonCsv(c).split('\r\n');
    expect(lines[0]).toBe(compareColumns.join(','));
    expect(lines[1].startsWith('"name=""x, y""","name=""x, y""",target-reached,10,1,10,3,2,,0.5,,0')).toBe(true);
    expect(lines[2]).toBe('');
  });
});
