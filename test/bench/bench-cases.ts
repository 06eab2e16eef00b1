// What `npm run bench` measures: throughput of the vector kernels, the objectives' gradients and
// top-k selection (against a full sort, measured in the same run). Timings are medians of
// repeated batches (the machine is shared and noisy); compare ratios within one run, not
// numbers across runs. The sizes are a parameter so that a test can run every case in a moment.

import { performance } from 'node:perf_hooks';
import { dot, matVec } from '../../src/vec/kernels.js';
import { topKIndices } from '../../src/vec/topk.js';
import { Rng } from '../../src/base/rng.js';
import { createObjective } from '../../src/problem/create-objective.js';
import type { Shard } from '../../src/problem/shard.js';
import type { BenchResult } from './bench-report.js';

export interface BenchSizes {
  dotLengths: number[];
  matVecShapes: [rows: number, cols: number][];
  gradient: { samples: number; features: number; classes: number };
  topK: [d: number, fraction: number][];
  /** wall seconds one timed batch should last */
  batchSeconds: number;
  /** timed batches per case; the median is reported */
  samples: number;
}

export const FULL_SIZES: BenchSizes = {
  dotLengths: [1_000, 100_000],
  matVecShapes: [
    [1_000, 100],
    [10_000, 500],
  ],
  gradient: { samples: 2_000, features: 100, classes: 10 },
  topK: [
    [100_000, 0.01],
    [1_000_000, 0.01],
  ],
  batchSeconds: 0.02,
  samples: 15,
};

/** Median seconds per call of fn over `samples` batches, each sized to last about batchSeconds. */
function secondsPerCall(
  fn: () => void,
  sizes: Pick<BenchSizes, 'batchSeconds' | 'samples'>,
  samples = sizes.samples,
): number {
  const batchMs = sizes.batchSeconds * 1000;
  let reps = 1;
  for (;;) {
    const t0 = performance.now();
    for (let r = 0; r < reps; r++) fn();
    if (performance.now() - t0 > batchMs || reps > 1e7) break;
    reps *= 2;
  }
  const times: number[] = [];
  for (let s = 0; s < samples; s++) {
    const t0 = performance.now();
    for (let r = 0; r < reps; r++) fn();
    times.push((performance.now() - t0) / 1000 / reps);
  }
  times.sort((a, b) => a - b);
  return times[Math.floor(times.length / 2)];
}

function randomVector(rng: Rng, d: number): Float64Array {
  const v = new Float64Array(d);
  for (let j = 0; j < d; j++) v[j] = rng.normal();
  return v;
}

function randomShard(rng: Rng, n: number, p: number, labels: (rng: Rng) => number): Shard {
  return {
    clientId: 0,
    sampleCount: n,
    featureCount: p,
    features: randomVector(rng, n * p),
    targets: Float64Array.from({ length: n }, () => labels(rng)),
  };
}

/** Keeps results alive so that the optimizer cannot drop the measured calls. */
let sink = 0;

export function benchSink(): number {
  return sink;
}

export function runBench(sizes: BenchSizes = FULL_SIZES): BenchResult[] {
  const rng = Rng.derive(1, 'bench');
  const results: BenchResult[] = [];
  for (const d of sizes.dotLengths) {
    const x = randomVector(rng, d);
    const y = randomVector(rng, d);
    const s = secondsPerCall(() => {
      sink += dot(x, y);
    }, sizes);
    results.push({
      suite: 'vec',
      case: 'dot',
      shape: { d },
      figure: (2 * d) / s / 1e9,
      unit: 'GFLOP/s',
    });
  }
  for (const [rows, cols] of sizes.matVecShapes) {
    const a = randomVector(rng, rows * cols);
    const x = randomVector(rng, cols);
    const out = new Float64Array(rows);
    const s = secondsPerCall(() => matVec(a, rows, cols, x, out), sizes);
    results.push({
      suite: 'vec',
      case: 'matVec',
      shape: { rows, cols },
      figure: (2 * rows * cols) / s / 1e9,
      unit: 'GFLOP/s',
    });
  }
  const { samples: n, features: p, classes } = sizes.gradient;
  const objectives = [
    {
      kind: 'least-squares' as const,
      shard: randomShard(rng, n, p, (r) => r.normal()),
      flops: 4 * n * p,
    },
    {
      kind: 'logistic' as const,
      shard: randomShard(rng, n, p, (r) => r.nextInt(2)),
      flops: 4 * n * p,
    },
    {
      kind: 'softmax' as const,
      shard: randomShard(rng, n, p, (r) => r.nextInt(classes)),
      flops: 4 * n * p * classes,
    },
  ];
  for (const o of objectives) {
    const objective = createObjective({ kind: o.kind, regularization: 1e-3, classes }, o.shard);
    const x = randomVector(rng, objective.dim);
    const g = new Float64Array(objective.dim);
    const s = secondsPerCall(() => objective.gradient(x, g), sizes);
    results.push({
      suite: 'problem',
      case: `gradient ${o.kind}`,
      shape: { samples: n, features: p, ...(o.kind === 'softmax' ? { classes } : {}) },
      figure: o.flops / s / 1e9,
      unit: 'GFLOP/s',
    });
  }
  for (const [d, fraction] of sizes.topK) {
    const v = randomVector(rng, d);
    const k = Math.ceil(d * fraction);
    // Fewer batches for these: a full sort of a million entries takes a while.
    const selectSeconds = secondsPerCall(
      () => {
        sink += topKIndices(v, k).length;
      },
      sizes,
      Math.min(sizes.samples, 7),
    );
    const sortSeconds = secondsPerCall(
      () => {
        const idx = Array.from({ length: d }, (_, j) => j);
        idx.sort((a, b) => Math.abs(v[b]) - Math.abs(v[a]) || a - b);
        sink += idx[k - 1];
      },
      sizes,
      Math.min(sizes.samples, 3),
    );
    const figure = d / selectSeconds / 1e6;
    const sorted = d / sortSeconds / 1e6;
    results.push({
      suite: 'compress',
      case: 'top-k select',
      shape: { d, k },
      figure,
      unit: 'Mentries/s',
      reference: { against: 'full sort', figure: sorted, ratio: figure / sorted },
    });
  }
  return results;
}
