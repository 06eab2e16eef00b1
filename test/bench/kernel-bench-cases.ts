// The kernel suite of `npm run bench`: GFLOP/s of the least-squares and logistic full gradients
// (objective.gradient, the call the engine makes, copies of x and out included) beside the same
// kernel in C (c/gradient-kernels.c), compiled here with gcc -O3 -march=native, no fast-math,
// into a temporary folder. Each case times roundwire and then C back to back, from wall time and
// from CPU time; the ratio of CPU figures is the steadier one on a loaded machine. With those
// flags gcc contracts a * b + c into fused multiply-adds, which round once instead of twice: a
// second build with -ffp-contract=off (run once, untimed) does the same operations as roundwire
// and is checked for the same least-squares bits.
//
// FLOPs per gradient: 4 n d (n dot products of length d: 2 n d; n rows added into the
// gradient: 2 n d). The O(n + d) rest (weights, scaling, regularizer, n exponentials for
// logistic) is not counted.

import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { performance } from 'node:perf_hooks';
import { Rng } from '../../src/base/rng.js';
import { createObjective } from '../../src/problem/create-objective.js';
import type { BenchResult } from './bench-report.js';

export interface KernelBenchSizes {
  shapes: [samples: number, features: number][];
  /** wall seconds one timed batch should last */
  batchSeconds: number;
  /** timed batches per case; the medians are reported */
  batches: number;
}

export const FULL_KERNEL_SIZES: KernelBenchSizes = {
  shapes: [
    [4_000, 500],
    [20, 1_000],
    [1_000, 100],
  ],
  batchSeconds: 0.05,
  batches: 15,
};

const KINDS = ['least-squares', 'logistic'] as const;
const LAMBDA = 1e-3;
const COMPILE_FLAGS = ['-O3', '-march=native'];
const SAME_OPERATIONS_FLAGS = [...COMPILE_FLAGS, '-ffp-contract=off'];

interface Timing {
  wallSecondsPerCall: number;
  cpuSecondsPerCall: number;
}

const median = (values: number[]) => values.sort((a, b) => a - b)[Math.floor(values.length / 2)];

/** Medians of wall and CPU seconds per call over `batches` batches of about batchSeconds each. */
function timeCalls(fn: () => void, sizes: KernelBenchSizes): Timing {
  let reps = 1;
  for (;;) {
    const t0 = performance.now();
    for (let r = 0; r < reps; r++) fn();
    if (performance.now() - t0 > sizes.batchSeconds * 1000 || reps > 1e7) break;
    reps *= 2;
  }
  const wall: number[] = [];
  const cpu: number[] = [];
  for (let k = 0; k < sizes.batches; k++) {
    const cpu0 = process.cpuUsage();
    const t0 = performance.now();
    for (let r = 0; r < reps; r++) fn();
    wall.push((performance.now() - t0) / 1000 / reps);
    const used = process.cpuUsage(cpu0);
    cpu.push((used.user + used.system) / 1e6 / reps);
  }
  return { wallSecondsPerCall: median(wall), cpuSecondsPerCall: median(cpu) };
}

function cSource(): string {
  // From test/bench/ under vitest, from dist/test/bench/ once built.
  for (const relative of ['./c/gradient-kernels.c', '../../../test/bench/c/gradient-kernels.c']) {
    const path = fileURLToPath(new URL(relative, import.meta.url));
    if (existsSync(path)) return path;
  }
  throw new Error('test/bench/c/gradient-kernels.c is missing');
}

/** The compiled reference (timed, and untimed without contraction), or why there is none. */
function compileReference(
  folder: string,
): { timed: string; sameOperations: string } | { skipped: string } {
  const binaries = { timed: COMPILE_FLAGS, sameOperations: SAME_OPERATIONS_FLAGS };
  const paths = {
    timed: join(folder, 'gradient-kernels'),
    sameOperations: join(folder, 'gradient-kernels-exact'),
  };
  for (const which of ['timed', 'sameOperations'] as const) {
    const built = spawnSync('gcc', [...binaries[which], '-o', paths[which], cSource(), '-lm'], {
      encoding: 'utf8',
    });
    if (built.error)
      return { skipped: `no C reference: gcc did not start (${built.error.message})` };
    if (built.status !== 0)
      return { skipped: `no C reference: gcc failed: ${built.stderr.trim()}` };
  }
  return paths;
}

function runReference(
  binary: string,
  folder: string,
  kindCode: number,
  shard: { n: number; d: number; features: Float64Array; targets: Float64Array },
  x: Float64Array,
  sizes: KernelBenchSizes,
): Timing & { gradient: Float64Array } {
  const input = join(folder, 'input.f64');
  const output = join(folder, 'gradient.f64');
  const header = [kindCode, shard.n, shard.d, LAMBDA, sizes.batchSeconds, sizes.batches];
  const parts = [Float64Array.from(header), shard.features, shard.targets, x];
  writeFileSync(
    input,
    Buffer.concat(parts.map((p) => Buffer.from(p.buffer, p.byteOffset, p.byteLength))),
  );
  const run = spawnSync(binary, [input, output], { encoding: 'utf8' });
  if (run.status !== 0)
    throw new Error(`the C reference failed: ${run.stderr || run.error?.message}`);
  const timing = JSON.parse(run.stdout) as Timing;
  const bytes = readFileSync(output);
  const gradient = new Float64Array(
    bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength),
  );
  return { ...timing, gradient };
}

const sameBits = (a: Float64Array, b: Float64Array) =>
  a.length === b.length && a.every((v, j) => Object.is(v, b[j]));

export function runKernelBench(sizes: KernelBenchSizes = FULL_KERNEL_SIZES): BenchResult[] {
  const rng = Rng.derive(1, 'bench', 'kernels');
  const folder = mkdtempSync(join(tmpdir(), 'roundwire-kernels-'));
  const results: BenchResult[] = [];
  try {
    const reference = compileReference(folder);
    for (const [n, d] of sizes.shapes) {
      for (const kind of KINDS) {
        const features = Float64Array.from({ length: n * d }, () => rng.normal());
        const targets = Float64Array.from({ length: n }, () =>
          kind === 'logistic' ? rng.nextInt(2) : rng.normal(),
        );
        const objective = createObjective(
          { kind, regularization: LAMBDA },
          { clientId: 0, sampleCount: n, featureCount: d, features, targets },
        );
        const x = Float64Array.from({ length: d }, () => rng.normal());
        const gradient = new Float64Array(d);
        const flops = 4 * n * d;
        const ours = timeCalls(() => objective.gradient(x, gradient), sizes);
        const result: BenchResult = {
          suite: 'kernels',
          case: `gradient ${kind}`,
          shape: { samples: n, features: d },
          figure: flops / ours.wallSecondsPerCall / 1e9,
          cpuFigure: flops / ours.cpuSecondsPerCall / 1e9,
          unit: 'GFLOP/s',
        };
        if ('skipped' in reference) {
          result.referenceSkipped = reference.skipped;
        } else {
          const kindCode = kind === 'logistic' ? 1 : 0;
          const data = { n, d, features, targets };
          const c = runReference(reference.timed, folder, kindCode, data, x, sizes);
          const once = { ...sizes, batchSeconds: 0, batches: 1 };
          const exact = runReference(reference.sameOperations, folder, kindCode, data, x, once);
          const figure = flops / c.wallSecondsPerCall / 1e9;
          const cpuFigure = flops / c.cpuSecondsPerCall / 1e9;
          result.reference = {
            against: `C, gcc ${COMPILE_FLAGS.join(' ')}`,
            figure,
            ratio: result.figure / figure,
            cpuFigure,
            cpuRatio: result.cpuFigure! / cpuFigure,
            // Logistic calls the C library's exp, whose last bit may differ from the engine's.
            sameBits: sameBits(gradient, exact.gradient),
          };
        }
        results.push(result);
      }
    }
  } finally {
    rmSync(folder, { recursive: true, force: true });
  }
  return results;
}
