// The comparison's verdict and files. CSV follows RFC 4180 (section 2: CRLF line ends, fields
// with commas, quotes or line breaks quoted, quotes doubled); the rows are hand-made, and every
// margin and ratio below is worked by hand from them.
import { describe, expect, it } from 'vitest';
import type { RunSummary } from '../../src/engine/run-summary.js';
import type { RoundRecord } from '../../src/engine/round-record.js';
import {
  buildComparison,
  columnHeading,
  compareColumns,
  comparisonCsv,
  tableColumns,
  tableHeader,
  verdictLines,
} from '../../src/report/compare-table.js';
import type { Variant } from '../../src/report/compare-variants.js';

function outcome(
  label: string,
  reached: number | null,
  payload: number | null,
  virtualSeconds: number | null,
  clock: 'virtual' | 'wall' = 'virtual',
) {
  const variant: Variant = { index: 0, label, folderName: label, rungs: [], tweaks: [] };
  const summary = {
    clock,
    runtime: 'in-process',
    stopReason: reached === null ? 'rounds-complete' : 'target-reached',
    rounds: 10,
    roundsToTarget: reached,
    toTarget: {
      payloadBytes: payload,
      virtualSeconds,
      wallSeconds: virtualSeconds === null ? null : virtualSeconds * 10,
    },
    floor: { measured: null },
    rate: {
      measured: 0.5,
      predicted: null,
      asymptotic: { measured: null, status: 'no-prediction' },
    },
    droppedUpdates: 0,
  } as unknown as RunSummary;
  const rounds = Array.from({ length: 11 }, (_, r) => ({
    round: r,
    bytes: { payload: { up: r === 0 ? 0 : 3, down: r === 0 ? 0 : 1 } },
  })) as RoundRecord[];
  return { variant, summary, rounds };
}

describe('buildComparison', () => {
  it('ranks bytes and time among the variants that reached the target, with the runner-up and the margin', () => {
    const c = buildComparison(
      's',
      1e-8,
      [],
      [
        outcome('a', null, null, null),
        outcome('b', 4, 900, 3),
        outcome('c', 6, 500, 3),
        outcome('d', 2, 500, 5),
      ],
    );
    expect(c.verdict.reachedTarget).toBe(3);
    // ties go to the earlier variant: c and d both need 500 bytes
    expect(c.verdict.fewestBytesToTarget).toEqual({
      variant: 'c',
      value: 500,
      runnerUp: { variant: 'd', value: 500 },
      margin: 0,
      ratio: 1,
    });
    expect(c.verdict.leastTimeToTarget).toEqual({
      variant: 'b',
      value: 3,
      runnerUp: { variant: 'c', value: 3 },
      margin: 0,
      ratio: 1,
    });
    // uplink bytes through the target round: 3 bytes a round in these records
    expect(c.variants.map((r) => r.uplinkBytesToTarget)).toEqual([null, 12, 18, 6]);
    expect(c.verdict.fewestUplinkBytesToTarget).toEqual({
      variant: 'd',
      value: 6,
      runnerUp: { variant: 'b', value: 12 },
      margin: 6,
      ratio: 2,
    });
    expect(c.timeBasis).toBe('modelled');
    expect(verdictLines(c)).toEqual([
      '3 of 4 variants reached the target f - f* <= 1.0000e-8',
      'fewest bytes to target: c (500 bytes; tied with runner-up d)',
      'fewest uplink bytes to target: d (6 bytes; 6 bytes fewer than runner-up b, which needs 2.00 times as many)',
      'least modelled time to target: b (3 s; tied with runner-up c)',
    ]);
  });

  it('words the margin to the runner-up, and a lone finisher', () => {
    const c = buildComparison(
      's',
      1e-8,
      [],
      [outcome('slow', 3, 400, 8), outcome('quick', 3, 100, 2)],
    );
    expect(verdictLines(c)).toContain(
      'fewest bytes to target: quick (100 bytes; 300 bytes fewer than runner-up slow, which needs 4.00 times as many)',
    );
    expect(verdictLines(c)).toContain(
      'least modelled time to target: quick (2 s; 6 s less than runner-up slow, which needs 4.00 times as long)',
    );
    const alone = buildComparison(
      's',
      1e-8,
      [],
      [outcome('a', null, null, null), outcome('b', 3, 100, 2)],
    );
    expect(alone.verdict.fewestBytesToTarget).toEqual({
      variant: 'b',
      value: 100,
      runnerUp: null,
      margin: null,
      ratio: null,
    });
    expect(verdictLines(alone)).toContain(
      'fewest bytes to target: b (100 bytes; the only variant that reached the target)',
    );
  });

  it('uses wall seconds as soon as one variant ran on the wall clock, and says so', () => {
    const c = buildComparison('s', 1, [], [outcome('a', 1, 10, 2), outcome('b', 1, 10, 1, 'wall')]);
    expect(c.timeBasis).toBe('wall');
    expect(c.variants.map((r) => r.secondsToTarget)).toEqual([20, 10]);
    expect(verdictLines(c).at(-1)).toMatch(
      /^least wall time to target: b \(10 s; 10 s less than runner-up a, which needs 2\.00 times as long\)$/,
    );
  });

  it('says plainly when no variant reached the target', () => {
    const c = buildComparison('s', 1e-8, [], [outcome('a', null, null, null)]);
    expect(c.verdict).toEqual({
      reachedTarget: 0,
      fewestBytesToTarget: null,
      fewestUplinkBytesToTarget: null,
      leastTimeToTarget: null,
    });
    expect(verdictLines(c)).toEqual([
      'no variant reached the target f - f* <= 1.0000e-8 within its rounds, so none is ranked',
    ]);
  });
});

describe('columns', () => {
  it('the table headings are the CSV and JSON keys in words, with units in brackets', () => {
    expect(tableColumns.map((c) => c.name)).toEqual(
      compareColumns.filter((k) => k !== 'folder').map(columnHeading),
    );
    expect(tableHeader).toContain('bytes to target [kB]');
    expect(tableHeader).toContain('seconds to target [s]');
    expect(columnHeading('uplinkBytesToTarget')).toBe('uplink bytes to target');
  });
});

describe('comparisonCsv', () => {
  it('writes a header of the JSON keys and quotes fields as RFC 4180 asks', () => {
    const c = buildComparison('s', 1, [], [outcome('name:"x, y"', 1, 10, 2)]);
    const lines = comparisonCsv(c).split('\r\n');
    expect(lines[0]).toBe(compareColumns.join(','));
    expect(lines[1]).toBe(
      '"name:""x, y""",target-reached,10,1,10,3,2,,,,,0.5,,,no-prediction,0,"name:""x, y""",',
    );
    expect(lines[2]).toBe('');
  });
});
