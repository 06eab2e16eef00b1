// The benchmark document's shape, on a run of every case at tiny sizes (a few milliseconds a
// case). No duration is asserted: only that each figure is there, positive and where the schema
// puts it.
import { describe, expect, it } from 'vitest';
import {
  BENCH_REPORT_VERSION,
  benchReport,
  benchReportSchema,
  benchResultSchema,
  type BenchResult,
} from './bench-report.js';
import { runBench, type BenchSizes } from './bench-cases.js';
import { runOracleBench } from './oracle-bench-cases.js';
import { runKernelBench } from './kernel-bench-cases.js';
import { spawnSync } from 'node:child_process';
import { runWireBench, sparseInformationBoundBytes, upWireBytes } from './wire-envelope-cases.js';
import { runScaleBench } from './scale-cases.js';

const TINY_SIZES: BenchSizes = {
  dotLengths: [64],
  matVecShapes: [[16, 8]],
  gradient: { samples: 32, features: 4, classes: 3 },
  topK: [[256, 0.05]],
  batchSeconds: 0.001,
  samples: 3,
};

describe('bench output', () => {
  const report = benchReport(runBench(TINY_SIZES));

  it('is one versioned document with the machine and every case', () => {
    expect(report.roundwireBench).toBe(BENCH_REPORT_VERSION);
    expect(report.machine.node).toBe(process.version);
    expect(report.results.map((r) => `${r.suite}/${r.case}`)).toEqual([
      'vec/dot',
      'vec/matVec',
      'problem/gradient least-squares',
      'problem/gradient logistic',
      'problem/gradient softmax',
      'compress/top-k select',
    ]);
    expect(report.results[0].shape).toEqual({ d: 64 });
    expect(report.results[4].shape).toEqual({ samples: 32, features: 4, classes: 3 });
  });

  it('gives top-k selection a full sort as its reference, with the ratio of the two figures', () => {
    const topK = report.results.find((r) => r.case === 'top-k select')!;
    // k = ceil(d * fraction) = ceil(256 * 0.05) = 13
    expect(topK.shape).toEqual({ d: 256, k: 13 });
    expect(topK.reference?.against).toBe('full sort');
    expect(topK.reference!.ratio).toBeCloseTo(topK.figure / topK.reference!.figure, 12);
    expect(report.results.filter((r) => r.reference !== undefined)).toHaveLength(1);
  });

  it('survives JSON and the schema, which refuses the list-of-figures form and unknown keys', () => {
    expect(benchReportSchema.parse(JSON.parse(JSON.stringify(report)))).toEqual(report);
    const listForm = report.results.map((r) => ({
      name: r.case,
      params: r.shape,
      value: r.figure,
      unit: r.unit,
    }));
    expect(benchReportSchema.safeParse(listForm).success).toBe(false);
    expect(
      benchReportSchema.safeParse({ ...report, results: [{ ...report.results[0], value: 1 }] })
        .success,
    ).toBe(false);
    expect(
      benchReportSchema.safeParse({ ...report, roundwireBench: BENCH_REPORT_VERSION - 1 }).success,
    ).toBe(false);
  });
});

describe('targets and parts', () => {
  const lowerIsBetter: BenchResult = {
    suite: 'scale',
    case: 'peak RSS distributed, all processes',
    shape: { clients: 4 },
    figure: 300,
    unit: 'MiB',
    better: 'lower',
    parts: { coordinator: 100, 'worker 1': 120, 'worker 2': 80 },
    target: { appliesTo: 'figure', figure: 4096, unit: 'MiB', met: true },
  };

  it('accepts a target judged in the result direction and parts that add up to the figure', () => {
    expect(benchResultSchema.safeParse(lowerIsBetter).success).toBe(true);
  });

  it('refuses a met that contradicts the figure, a unit other than the result, and parts that do not add up', () => {
    const wrongMet = { ...lowerIsBetter, target: { ...lowerIsBetter.target!, met: false } };
    const wrongUnit = { ...lowerIsBetter, target: { ...lowerIsBetter.target!, unit: 'GB' } };
    const wrongParts = { ...lowerIsBetter, parts: { coordinator: 100 } };
    for (const [bad, path] of [
      [wrongMet, 'target.met'],
      [wrongUnit, 'target.unit'],
      [wrongParts, 'parts'],
    ] as const) {
      const parsed = benchResultSchema.safeParse(bad);
      expect(parsed.success).toBe(false);
      expect(parsed.error!.issues.map((i) => i.path.join('.'))).toEqual([path]);
    }
  });

  it('refuses a ratio target without a reference, and judges one with it on the ratio', () => {
    const ratioTarget = { appliesTo: 'ratio', figure: 1.3, unit: 'x', met: true } as const;
    expect(benchResultSchema.safeParse({ ...lowerIsBetter, target: ratioTarget }).success).toBe(
      false,
    );
    const withReference = {
      ...lowerIsBetter,
      reference: { against: 'in process', figure: 250, ratio: 1.2 },
      target: ratioTarget,
    };
    expect(benchResultSchema.safeParse(withReference).success).toBe(true);
  });
});

const denseOf = (dim: number) => ({
  dim,
  indices: null,
  values: new Float64Array(dim).fill(0.5),
});

describe('wire bench output', () => {
  // Small enough that C(d, k) is exact as a BigInt: the bound is checked against its definition.
  const d = 60;
  const k = 7;
  const results = benchReport(runWireBench({ sparse: { d, k }, dense: { d: 9_000 } })).results;

  it('measures the sparse upload against k f64 values plus log2 C(d, k) bits (common practice)', () => {
    let subsets = 1n;
    for (let i = 1n; i <= BigInt(k); i++) subsets = (subsets * (BigInt(d) - BigInt(k) + i)) / i;
    const boundBytes = k * 8 + Math.log2(Number(subsets)) / 8;
    expect(sparseInformationBoundBytes(d, k)).toBeCloseTo(boundBytes, 10);
    const sparse = results.find((r) => r.case === 'sparse up message')!;
    expect(sparse.reference!.figure).toBeCloseTo(boundBytes, 10);
    expect(sparse.reference!.ratio).toBeCloseTo(sparse.figure / boundBytes, 12);
    // A message carries more than its information: the values, indices, and an envelope.
    expect(sparse.figure).toBeGreaterThan(boundBytes);
    expect(sparse.target?.appliesTo).toBe('ratio');
  });

  it('measures the dense upload against its payload, d f64 values', () => {
    const dense = results.find((r) => r.case === 'dense up message')!;
    expect(dense.reference!.figure).toBe(9_000 * 8);
    expect(dense.reference!.ratio).toBeCloseTo(dense.figure / (9_000 * 8), 12);
  });

  it('frames an up as a worker sends it: the header grows where RFC 6455 says', () => {
    // One more f64 value is 8 more bytes, except where a length field widens: the frame's at
    // 65,536 bytes (RFC 6455 section 5.2: 16-bit to 64-bit extended length, 6 more bytes) and
    // the values' bin at 65,536 bytes, d = 8,192 (MessagePack spec, bin 16 to bin 32, 2 more).
    const steps: number[] = [];
    let before = upWireBytes(denseOf(8_100));
    for (let dim = 8_101; dim <= 8_200; dim++) {
      const now = upWireBytes(denseOf(dim));
      steps.push(now - before);
      before = now;
    }
    expect(steps.filter((s) => s === 8)).toHaveLength(steps.length - 2);
    expect(steps.filter((s) => s === 8 + 6)).toHaveLength(1);
    expect(steps[8_192 - 8_101]).toBe(8 + 2);
  });
});

describe('scale bench output', () => {
  it(
    'reports setup, rounds per second and peak RSS by process for both runtimes, and totals when asked',
    { timeout: 120_000 },
    async () => {
      const results = await runScaleBench([
        {
          label: 'tiny',
          problem: 'logistic',
          clients: 3,
          features: 4,
          samplesPerClient: 10,
          method: 'fedlin',
          localSteps: 2,
          rounds: 3,
          totalSeconds: true,
          targets: {
            distributedRoundsPerSecondMin: 1,
            distributedPeakResidentMiBMax: 4096,
            totalSecondsRatioMax: 1.3,
          },
        },
      ]);
      const report = benchReport(results);
      const byCase = new Map(report.results.map((r) => [r.case, r]));
      expect([...byCase.keys()]).toEqual([
        'tiny: setup in process',
        'tiny: setup distributed',
        'tiny: rounds per second in process',
        'tiny: rounds per second distributed',
        'tiny: peak RSS in process',
        'tiny: peak RSS distributed, all processes',
        'tiny: total seconds in process',
        'tiny: total seconds distributed',
      ]);
      const inProcessRate = byCase.get('tiny: rounds per second in process')!;
      const distributedRate = byCase.get('tiny: rounds per second distributed')!;
      expect(distributedRate.reference!.ratio).toBeCloseTo(
        distributedRate.figure / inProcessRate.figure,
        12,
      );
      expect(distributedRate.target?.unit).toBe('rounds/s');
      // The coordinator and the run's 2 local workers, each measured.
      const peak = byCase.get('tiny: peak RSS distributed, all processes')!;
      expect(Object.keys(peak.parts!)).toEqual(['coordinator', 'worker 1', 'worker 2']);
      for (const part of Object.values(peak.parts!)) expect(part).toBeGreaterThan(0);
      expect(Object.keys(byCase.get('tiny: peak RSS in process')!.parts!)).toEqual(['in process']);
      // A total spans the whole run, setup and rounds included.
      const total = byCase.get('tiny: total seconds in process')!;
      expect(total.figure).toBeGreaterThan(byCase.get('tiny: setup in process')!.figure);
      expect(byCase.get('tiny: total seconds distributed')!.target?.appliesTo).toBe('ratio');
    },
  );
});

describe('oracle bench output', () => {
  it('reports cold setup seconds, lower is better, for theory and for an in-process run', async () => {
    const results = await runOracleBench({
      theory: { clients: 3, features: 40, samples: 10 },
      logistic: { clients: 2, features: 40, samples: 50, rounds: 2 },
    });
    const report = benchReport(results);
    expect(report.results.map((r) => `${r.suite}/${r.case}`)).toEqual([
      'oracle/theory setup least-squares',
      'oracle/run setup logistic',
      'oracle/run in process total logistic',
    ]);
    for (const r of report.results) {
      expect(r.unit).toBe('s');
      expect(r.better).toBe('lower');
    }
    expect(report.results[0].shape).toEqual({ clients: 3, d: 40, samplesPerClient: 10 });
    expect(report.results[2].figure).toBeGreaterThanOrEqual(report.results[1].figure);
  });
});

describe('kernel bench output', () => {
  // Shapes with a tail after the block of 8 (d = 13) and below it (d = 5).
  const report = benchReport(
    runKernelBench({
      shapes: [
        [7, 13],
        [3, 5],
      ],
      batchSeconds: 0.001,
      batches: 3,
    }),
  );
  const gccPresent = spawnSync('gcc', ['--version']).error === undefined;

  it('reports GFLOP/s from wall and CPU time for both gradients at every shape', () => {
    expect(report.results.map((r) => `${r.suite}/${r.case}/${r.shape.features}`)).toEqual([
      'kernels/gradient least-squares/13',
      'kernels/gradient logistic/13',
      'kernels/gradient least-squares/5',
      'kernels/gradient logistic/5',
    ]);
    for (const r of report.results) {
      expect(r.unit).toBe('GFLOP/s');
      expect(r.cpuFigure).toBeGreaterThan(0);
    }
  });

  it('measures the C reference when gcc is there (same least-squares bits), and says why not otherwise', () => {
    for (const r of report.results) {
      if (gccPresent) {
        expect(r.reference?.against).toBe('C, gcc -O3 -march=native');
        expect(r.reference!.ratio).toBeCloseTo(r.figure / r.reference!.figure, 12);
        expect(r.reference!.cpuRatio).toBeCloseTo(r.cpuFigure! / r.reference!.cpuFigure!, 12);
        if (r.case === 'gradient least-squares') expect(r.reference!.sameBits).toBe(true);
      } else {
        expect(r.referenceSkipped).toMatch(/gcc/);
      }
    }
  });
});
