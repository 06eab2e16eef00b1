// The benchmark document's shape, on a run of every case at tiny sizes (a few milliseconds a
// case). No duration is asserted: only that each figure is there, positive and where the schema
// puts it.
import { describe, expect, it } from 'vitest';
import { BENCH_REPORT_VERSION, benchReport, benchReportSchema } from './bench-report.js';
import { runBench, type BenchSizes } from './bench-cases.js';
import { runOracleBench } from './oracle-bench-cases.js';
import { runKernelBench } from './kernel-bench-cases.js';
import { spawnSync } from 'node:child_process';

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
    expect(benchReportSchema.safeParse({ ...report, roundwireBench: 2 }).success).toBe(false);
  });
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
