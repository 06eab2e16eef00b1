// `npm run bench`: throughput of the kernels and objectives, printed as JSON
// [{name, params, value, unit}]. Timings are medians of repeated runs (the machine is shared and
// noisy); compare ratios within one run, not numbers across runs.

import { performance } from 'node:perf_hooks';
import { dot, matVec } from '../../src/vec/kernels.js';
import { topKIndices } from '../../src/vec/topk.js';
import { Rng } from '../../src/data/rng.js';
import { createObjective } from '../../src/problem/create-objective.js';
import type { Shard } from '../../src/data/shard.js';

export interface BenchResult {
  name: string;
  params: Record<string, number | string>;
  value: number;
  unit: string;
}

/** Median seconds per call of fn, over `samples` batches sized to take ~20 ms each. */
function secondsPerCall(fn: () => void, samples = 15): number {
  let reps = 1;
  for (;;) {
    const t0 = performance.now();
    for (let r = 0; r < reps; r++) fn();
    if (performance.now() - t0 > 20 || reps > 1e7) break;
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
  return { clientId: 0, sampleCount: n, featureCount: p, features: randomVector(rng, n * p), targets: Float64Array.from({ length: n }, () => labels(rng)) };
}

let sink = 0;

export function runBench(): BenchResult[] {
  const rng = Rng.derive(1, 'bench');
  const results: BenchResult[] = [];
  for (const d of [1_000, 100_000]) {
    const x = randomVector(rng, d);
    const y = randomVector(rng, d);
    const s = secondsPerCall(() => {
      sink += dot(x, y);
    });
    results.push({ name: 'dot', params: { d }, value: (2 * d) / s / 1e9, unit: 'GFLOP/s' });
  }
  for (const [rows, cols] of [
    [1_000, 100],
    [10_000, 500],
  ]) {
    const a = randomVector(rng, rows * cols);
    const x = randomVector(rng, cols);
    const out = new Float64Array(rows);
    const s = secondsPerCall(() => matVec(a, rows, cols, x, out));
    results.push({ name: 'matVec', params: { rows, cols }, value: (2 * rows * cols) / s / 1e9, unit: 'GFLOP/s' });
  }
  const n = 2_000;
  const p = 100;
  const classes = 10;
  const objectives = [
    { kind: 'least-squares' as const, shard: randomShard(rng, n, p, (r) => r.normal()), flops: 4 * n * p },
    { kind: 'logistic' as const, shard: randomShard(rng, n, p, (r) => r.nextInt(2)), flops: 4 * n * p },
    { kind: 'softmax' as const, shard: randomShard(rng, n, p, (r) => r.nextInt(classes)), flops: 4 * n * p * classes },
  ];
  for (const o of objectives) {
    const objective = createObjective({ kind: o.kind, regularization: 1e-3, classes }, o.shard);
    const x = randomVector(rng, objective.dim);
    const g = new Float64Array(objective.dim);
    const s = secondsPerCall(() => objective.gradient(x, g));
    results.push({ name: `gradient.${o.kind}`, params: { samples: n, features: p, ...(o.kind === 'softmax' ? { classes } : {}) }, value: o.flops / s / 1e9, unit: 'GFLOP/s' });
  }
  for (const [d, fraction] of [
    [100_000, 0.01],
    [1_000_000, 0.01],
  ]) {
    const v = randomVector(rng, d);
    const k = Math.ceil(d * fraction);
    const selectSeconds = secondsPerCall(() => {
      sink += topKIndices(v, k).length;
    }, 7);
    const sortSeconds = secondsPerCall(() => {
      const idx = Array.from({ length: d }, (_, j) => j);
      idx.sort((a, b) => Math.abs(v[b]) - Math.abs(v[a]) || a - b);
      sink += idx[k - 1];
    }, 3);
    results.push({ name: 'topk.select', params: { d, k }, value: d / selectSeconds / 1e6, unit: 'Mentries/s' });
    results.push({ name: 'topk.speedupOverFullSort', params: { d, k }, value: sortSeconds / selectSeconds, unit: 'ratio' });
  }
  return results;
}

const results = runBench();
process.stdout.write(`${JSON.stringify(results, null, 2)}\n`);
if (sink === Number.MIN_VALUE) process.stderr.write('');
