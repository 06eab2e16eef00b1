// A row-major matrix kept in WebAssembly memory, with the loops every objective's gradient and
// Hessian-vector product is made of: row dot products, weighted sums of rows, and two fused
// into one pass per row, the least-squares residual sum and the projection sum of a
// Hessian-vector product (which a matrix larger than the cache then streams from memory once,
// not twice). The kernels (wasm/row-kernels-module.ts) run two f64 lanes at a time.
//
// Why WebAssembly SIMD: least-squares gradient, CPU time on the team's 2-core AMD EPYC (Node
// 20.20), GFLOP/s at n = 4,000, d = 500, one process:
//   plain JS loop (the previous kernel)                 1.4
//   JS with eight partial sums, unrolled                1.9
//   wasm f64x2, one JS->wasm call per row               7.9
//   wasm f64x2, whole sum in one call                  10.3 (scratch run) / 7.5 (bench run)
//   C, gcc -O3 -march=native, same order               10.4 (scratch run) / 11.3 (bench run)
// and from `npm run bench -- --suite kernels` (rows two at a time, C measured back to back):
// 7.5 vs C 11.3 at 4,000 x 500 (0.66x), 10.0 vs 17.4 at 20 x 1,000 (0.58x), 11.8 vs 16.3 at
// 1,000 x 100 (0.72x); logistic 0.58x to 0.82x. So the whole sum runs in one call, and the
// matrix lives in kernel memory (copying it in per call would cost as much as the kernel).
//
// Determinism: every result is a fixed sequence of IEEE binary64 operations: a dot product sums
// in the order documented in row-kernels-module.ts, and the rows are added into the output one
// by one in the order listed. Results do not depend on the process, the chunking below or the
// machine, and a list of every row in order gives the same bits as `rows = null`.

import { allocateKernelRegion } from './wasm/kernel-arena.js';
import type { RowKernelExports } from './wasm/row-kernels-module.js';

const F64_BYTES = 8;
const U32_BYTES = 4;

export class RowMatrix {
  readonly rowCount: number;
  readonly columnCount: number;
  /** the matrix, row-major, in kernel memory */
  readonly values: Float64Array;
  /** one number per row (a shard's targets), in kernel memory */
  readonly rowValues: Float64Array;
  private readonly kernels: RowKernelExports;
  private readonly heap: Float64Array;
  private readonly indices: Uint32Array;
  private readonly valuesAt: number;
  private readonly rowValuesAt: number;
  /** byte offsets of scratch: every row number in order, a list of rows, per-row scalars, two vectors */
  private readonly everyRowAt: number;
  private readonly listAt: number;
  private readonly scalarsAt: number;
  private readonly vectorAt: number;
  private readonly outAt: number;

  /** Copies `values` (rowCount x columnCount) and `rowValues` (rowCount) into kernel memory. */
  constructor(
    values: Float64Array,
    rowCount: number,
    columnCount: number,
    rowValues: Float64Array,
  ) {
    this.rowCount = rowCount;
    this.columnCount = columnCount;
    const layout = [
      values.length * F64_BYTES,
      rowCount * F64_BYTES,
      rowCount * U32_BYTES,
      rowCount * U32_BYTES,
      rowCount * F64_BYTES,
      columnCount * F64_BYTES,
      columnCount * F64_BYTES,
    ].map((bytes) => Math.ceil(bytes / 16) * 16);
    const region = allocateKernelRegion(layout.reduce((sum, bytes) => sum + bytes, 0));
    const offsets: number[] = [];
    let at = region.byteOffset;
    for (const bytes of layout) {
      offsets.push(at);
      at += bytes;
    }
    [
      this.valuesAt,
      this.rowValuesAt,
      this.everyRowAt,
      this.listAt,
      this.scalarsAt,
      this.vectorAt,
      this.outAt,
    ] = offsets;
    this.kernels = region.kernels;
    this.heap = new Float64Array(region.buffer);
    this.indices = new Uint32Array(region.buffer);
    this.values = this.heap.subarray(
      this.valuesAt / F64_BYTES,
      this.valuesAt / F64_BYTES + values.length,
    );
    this.values.set(values);
    this.rowValues = this.heap.subarray(
      this.rowValuesAt / F64_BYTES,
      this.rowValuesAt / F64_BYTES + rowCount,
    );
    this.rowValues.set(rowValues);
    for (let s = 0; s < rowCount; s++) this.indices[this.everyRowAt / U32_BYTES + s] = s;
  }

  /**
   * out <- sum over the listed rows s (every row when null) of (a_s . x - b_s) a_s, with b the
   * row values: the least-squares gradient's sum, one pass over each row.
   */
  residualSum(x: Float64Array, rows: Uint32Array | null, out: Float64Array): void {
    const p = this.columnCount;
    this.heap.set(x, this.vectorAt / F64_BYTES);
    this.heap.fill(0, this.outAt / F64_BYTES, this.outAt / F64_BYTES + p);
    this.eachChunk(rows, (listAt, _start, count) =>
      this.kernels.residualRows(
        this.valuesAt,
        p,
        listAt,
        count,
        this.vectorAt,
        this.rowValuesAt,
        this.outAt,
      ),
    );
    out.set(this.heap.subarray(this.outAt / F64_BYTES, this.outAt / F64_BYTES + p));
  }

  /** z_t <- a_{rows_t} . x[xOffset .. xOffset + columnCount) for each listed row (all when null). */
  rowDots(x: Float64Array, xOffset: number, rows: Uint32Array | null, z: Float64Array): void {
    const p = this.columnCount;
    this.heap.set(x.subarray(xOffset, xOffset + p), this.vectorAt / F64_BYTES);
    const scalars = this.scalarsAt / F64_BYTES;
    this.eachChunk(rows, (listAt, start, count) => {
      this.kernels.rowDots(this.valuesAt, p, listAt, count, this.vectorAt, this.scalarsAt);
      z.set(this.heap.subarray(scalars, scalars + count), start);
    });
  }

  /** out[outOffset + j] <- out[outOffset + j] + sum_t w_t a_{rows_t, j}, rows in the listed order. */
  rowCombine(
    w: Float64Array,
    rows: Uint32Array | null,
    out: Float64Array,
    outOffset: number,
  ): void {
    const p = this.columnCount;
    const outStart = this.outAt / F64_BYTES;
    this.heap.set(out.subarray(outOffset, outOffset + p), outStart);
    const scalars = this.scalarsAt / F64_BYTES;
    this.eachChunk(rows, (listAt, start, count) => {
      this.heap.set(w.subarray(start, start + count), scalars);
      this.kernels.rowCombine(this.valuesAt, p, listAt, count, this.scalarsAt, this.outAt);
    });
    out.set(this.heap.subarray(outStart, outStart + p), outOffset);
  }

  /**
   * out <- out + sum_s (c_s (a_s . x)) a_s over every row in order, c_s = 1 when `factors` is
   * null: rowDots then rowCombine with weights c_s z_s, bit for bit, in one pass over the matrix
   * (each row is dotted and added while it is in cache, so the data is read from memory once).
   */
  projectCombine(x: Float64Array, factors: Float64Array | null, out: Float64Array): void {
    const p = this.columnCount;
    const scalars = this.scalarsAt / F64_BYTES;
    if (factors === null) this.heap.fill(1, scalars, scalars + this.rowCount);
    else this.heap.set(factors.subarray(0, this.rowCount), scalars);
    this.heap.set(x, this.vectorAt / F64_BYTES);
    this.heap.set(out, this.outAt / F64_BYTES);
    this.kernels.rowProjectCombine(
      this.valuesAt,
      p,
      this.everyRowAt,
      this.rowCount,
      this.scalarsAt,
      this.vectorAt,
      this.outAt,
    );
    out.set(this.heap.subarray(this.outAt / F64_BYTES, this.outAt / F64_BYTES + p));
  }

  /** Hands the kernel the rows in chunks of at most rowCount (a list may repeat rows). */
  private eachChunk(
    rows: Uint32Array | null,
    body: (listAt: number, start: number, count: number) => void,
  ): void {
    if (rows === null) {
      body(this.everyRowAt, 0, this.rowCount);
      return;
    }
    for (let start = 0; start < rows.length; start += this.rowCount) {
      const count = Math.min(this.rowCount, rows.length - start);
      this.indices.set(rows.subarray(start, start + count), this.listAt / U32_BYTES);
      body(this.listAt, start, count);
    }
  }
}
