// Series derivation on hand-made records. The predicted curve is the linear-convergence model
// f_k - f* = floor + (f_0 - floor) rate^k that the design document states for every prediction
// (DESIGN.md, "Oracle and theory"); the other numbers are counted by hand from the records.
import { describe, expect, it } from 'vitest';
import type { ClientRoundRecord, RoundRecord } from '../../src/engine/round-record.js';
import {
  bytesByLayer,
  clientTimeline,
  localStepsHistogram,
  measuredCurve,
  predictedCurve,
} from '../../src/report/run-series.js';

function round(
  r: number,
  suboptimality: number | null,
  extra: Partial<RoundRecord> = {},
): RoundRecord {
  return {
    round: r,
    suboptimality,
    distance: null,
    predictedSuboptimality: null,
    bytes: { payload: { up: r === 0 ? 0 : 100, down: r === 0 ? 0 : 50 } },
    localSteps: r === 0 ? {} : { '0': 5, '1': 7 },
    dropped: [],
    roundSeconds: r === 0 ? 0 : 2,
    virtualSeconds: 2 * r,
    wallSeconds: 0.1 * r,
    ...extra,
  };
}

describe('measuredCurve', () => {
  it('accumulates payload bytes, picks the clock, skips unevaluated rounds and stops at divergence', () => {
    const rounds = [
      round(0, 1),
      round(1, null),
      round(2, 0.5),
      round(3, 0),
      round(4, Number.POSITIVE_INFINITY),
      round(5, 0.1),
    ];
    const virtual = measuredCurve(rounds, 'virtual', 'm');
    expect(virtual.points.map((p) => [p.round, p.payloadBytes, p.seconds])).toEqual([
      [0, 0, 0],
      [2, 300, 4],
    ]);
    expect(virtual.nonPositive).toBe(1);
    expect(virtual.diverged).toBe(true);
    expect(measuredCurve(rounds, 'wall', 'm').points[1].seconds).toBeCloseTo(0.2, 12);
  });

  it('bounds the points it keeps', () => {
    const rounds = Array.from({ length: 5000 }, (_, r) => round(r, 1 / (r + 1)));
    const curve = measuredCurve(rounds, 'virtual', 'm', 100);
    expect(curve.points.length).toBe(100);
    expect(curve.pointsTotal).toBe(5000);
    expect(curve.points[99].round).toBe(4999);
  });
});

describe('predictedCurve', () => {
  const withPrediction = (r: number, measured: number, predicted: number | null): RoundRecord =>
    round(r, measured, { predictedSuboptimality: predicted });
  const rounds = [
    withPrediction(0, 2, 2),
    withPrediction(1, 1, 0.9),
    round(2, null),
    withPrediction(3, 0.3, 0.25),
  ];
  const measured = measuredCurve(rounds, 'virtual', 'm').points;

  it("draws each record's predicted value at the measured curve's rounds, on its bytes and seconds", () => {
    const rows = predictedCurve(rounds, measured, 'p');
    expect(rows?.map((r) => [r.round, r.suboptimality])).toEqual([
      [0, 2],
      [1, 0.9],
      [3, 0.25],
    ]);
    expect(rows?.map((r) => r.payloadBytes)).toEqual(measured.map((m) => m.payloadBytes));
    expect(rows?.every((r) => r.series === 'p')).toBe(true);
  });

  it('is null when the run recorded no predicted value', () => {
    const plain = [round(0, 2), round(1, 1)];
    expect(predictedCurve(plain, measuredCurve(plain, 'virtual', 'm').points, 'p')).toBeNull();
  });
});

describe('bytesByLayer', () => {
  it('lists only the layers the records hold, up and down, without round 0', () => {
    const plain = bytesByLayer([round(0, 1), round(1, 1), round(2, 1)]);
    expect(plain.layers).toEqual(['payload']);
    expect(plain.rows).toEqual([
      { round: 1, layer: 'payload', direction: 'up', bytes: 100 },
      { round: 1, layer: 'payload', direction: 'down', bytes: 50 },
      { round: 2, layer: 'payload', direction: 'up', bytes: 100 },
      { round: 2, layer: 'payload', direction: 'down', bytes: 50 },
    ]);
    const wire = bytesByLayer([
      round(1, 1, {
        bytes: {
          payload: { up: 1, down: 2 },
          encoded: { up: 3, down: 4 },
          wire: { up: 5, down: 6 },
        },
      }),
    ]);
    expect(wire.layers).toEqual(['payload', 'encoded', 'wire']);
    expect(wire.rows.map((r) => r.bytes)).toEqual([1, 2, 3, 4, 5, 6]);
  });
});

describe('localStepsHistogram', () => {
  it('counts one bar a value when values are few', () => {
    const bars = localStepsHistogram([round(0, 1), round(1, 1), round(2, 1)]);
    expect(bars).toEqual([
      { label: '5', low: 5, high: 5, count: 2 },
      { label: '7', low: 7, high: 7, count: 2 },
    ]);
  });

  it('bins equal widths when values spread wide, keeping every pair', () => {
    const steps: Record<string, number> = {};
    for (let i = 0; i < 100; i++) steps[String(i)] = i + 1;
    const bars = localStepsHistogram([round(1, 1, { localSteps: steps })], 10);
    expect(bars.length).toBe(10);
    expect(bars[0]).toEqual({ label: '1-10', low: 1, high: 10, count: 10 });
    expect(bars.reduce((n, b) => n + b.count, 0)).toBe(100);
  });
});

describe('clientTimeline', () => {
  const client = (
    r: number,
    id: number,
    compute: number,
    transfer: number,
    wait: number,
    exchange = 'local',
  ): ClientRoundRecord => ({
    round: r,
    exchange,
    clientId: id,
    localSteps: 1,
    computeSeconds: compute,
    waitSeconds: wait,
    transferSeconds: transfer,
    bytes: { payload: { up: 0, down: 0 } },
    dropped: false,
  });

  it('lays each exchange out as compute, transfer, idle from the round start, for the last rounds only', () => {
    const rounds = [round(0, 1), round(1, 1), round(2, 1), round(3, 1)];
    const clients = [
      client(1, 0, 1, 0, 1),
      client(2, 0, 1, 0.5, 0.5),
      client(3, 0, 0.5, 0.5, 0, 'gradient'),
      client(3, 0, 0.5, 0, 0.5),
      client(3, 1, 2, 0, 0),
    ];
    const t = clientTimeline(rounds, clients, 2, 64);
    expect(t.roundsShown).toEqual([2, 3]);
    const c0 = t.segments.filter((s) => s.client === 'client 0');
    expect(c0.map((s) => [s.round, s.activity, s.start, s.end])).toEqual([
      [2, 'compute', 0, 1],
      [2, 'transfer', 1, 1.5],
      [2, 'idle', 1.5, 2],
      [3, 'compute', 2, 2.5],
      [3, 'transfer', 2.5, 3],
      [3, 'compute', 3, 3.5],
      [3, 'idle', 3.5, 4],
    ]);
  });

  it('shows at most clientsMax clients, the lowest ids', () => {
    const clients = Array.from({ length: 100 }, (_, id) => client(1, id, 1, 0, 0));
    const t = clientTimeline([round(0, 1), round(1, 1)], clients, 10, 64);
    expect(t.clientsShown).toBe(64);
    expect(t.clientsTotal).toBe(100);
    expect(new Set(t.segments.map((s) => s.client)).size).toBe(64);
    expect(t.segments.some((s) => s.client === 'client 64')).toBe(false);
  });

  it('reads the records once, as they come: the lowest ids of the shown rounds win whatever the order', () => {
    const rounds = Array.from({ length: 21 }, (_, r) => round(r, 1));
    let yielded = 0;
    // 20 rounds x 5,000 clients, highest ids first, as a generator read once (never an array).
    function* records(): Generator<ClientRoundRecord> {
      for (let r = 1; r <= 20; r++)
        for (let id = 4999; id >= 0; id--) {
          yielded++;
          // client 0 takes part in the early rounds only, so it is not drawn
          if (id === 0 && r > 5) continue;
          yield client(r, id, 1, 0, 0);
        }
    }
    const t = clientTimeline(rounds, records(), 10, 64);
    expect(yielded).toBe(100_000);
    expect(t.clientsTotal).toBe(5000);
    expect(t.clientsShown).toBe(64);
    const shown = [...new Set(t.segments.map((s) => Number(s.client.slice(7))))].sort(
      (a, b) => a - b,
    );
    expect(shown).toEqual(Array.from({ length: 64 }, (_, i) => i + 1));
    expect(t.segments.length).toBe(64 * 10);
  });
});
