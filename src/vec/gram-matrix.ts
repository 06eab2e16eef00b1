// A symmetric p x p matrix formed from data rows as a weighted Gram, G = sum_s c_s a_s a_s^T, kept
// in a WebAssembly memory of its own (collected with the object) and applied to vectors by the
// row kernels. It is a least-squares Hessian without its ridge term: where an operator is applied
// hundreds of times (Lanczos to a tight tolerance, then conjugate gradients) on data with more
// rows than columns, forming it once, n p^2 / 2 products with the operands in cache, costs less
// than 2 n p products per application streamed from memory (src/problem/formed-gram.ts decides).
//
// Rows are gathered into panels of GRAM_PANEL_ROWS and transposed, so that a column of the panel
// is a contiguous row for the kernel; gramUpper (wasm/row-kernels-module.ts) adds a panel's part
// to the upper triangle, G_jk <- G_jk + sum_t (c_t a_tj) a_tk for k >= j, the sum over the panel's
// rows t in the order of the row kernels' dot product. A last, partial panel is padded with zero
// rows, whose products add exact zeros. Once every row is in, the upper triangle is copied to the
// lower one. The same rows in the same order give the same bits on every run and machine.

import { allocateKernelMemory } from './wasm/kernel-arena.js';
import type { RowKernelExports } from './wasm/row-kernels-module.js';

const F64_BYTES = 8;
const U32_BYTES = 4;
/**
 * Data rows per panel. Measured once (d = 1,000 and 20,000 rows, CPU seconds of one formation on
 * the shared 2-core EPYC under load): 32 rows 2.9 s, 64 rows 2.7 s, 128 rows 2.2 s (9 GFLOP/s),
 * 256 rows 2.4 s, 512 rows 2.6 s. Longer panels mean fewer passes over G, shorter ones keep the
 * panel in a nearer cache while each of its columns is dotted with every later one.
 */
export const GRAM_PANEL_ROWS = 128;

/** `rowCount` rows of `values` (row-major, the matrix's dimension columns), each weighted by `weight`. */
export interface WeightedRows {
  values: Float64Array;
  rowCount: number;
  weight: number;
}

export class GramMatrix {
  readonly dim: number;
  private readonly kernels: RowKernelExports;
  private readonly heap: Float64Array;
  /** byte offsets: the matrix, the panel, its weighted copy, every row number, two vectors */
  private readonly gramAt: number;
  private readonly panelAt: number;
  private readonly weightedAt: number;
  private readonly everyRowAt: number;
  private readonly vectorAt: number;
  private readonly outAt: number;
  /** rows in the panel not yet added */
  private panelFill = 0;

  /** sum over the blocks of weight * sum_s a_s a_s^T, in the order given. */
  constructor(dim: number, blocks: readonly WeightedRows[]) {
    this.dim = dim;
    const s = GRAM_PANEL_ROWS;
    const layout = [
      dim * dim * F64_BYTES,
      dim * s * F64_BYTES,
      dim * s * F64_BYTES,
      dim * U32_BYTES,
      dim * F64_BYTES,
      dim * F64_BYTES,
    ].map((bytes) => Math.ceil(bytes / 16) * 16);
    const region = allocateKernelMemory(layout.reduce((sum, bytes) => sum + bytes, 0));
    const offsets: number[] = [];
    let at = region.byteOffset;
    for (const bytes of layout) {
      offsets.push(at);
      at += bytes;
    }
    [this.gramAt, this.panelAt, this.weightedAt, this.everyRowAt, this.vectorAt, this.outAt] =
      offsets;
    this.kernels = region.kernels;
    this.heap = new Float64Array(region.buffer);
    const indices = new Uint32Array(region.buffer);
    for (let j = 0; j < dim; j++) indices[this.everyRowAt / U32_BYTES + j] = j;
    for (const block of blocks) this.addRows(block);
    this.flushPanel();
    this.mirrorUpperTriangle();
  }

  /** out <- G v */
  multiply(v: Float64Array, out: Float64Array): void {
    const p = this.dim;
    this.heap.set(v, this.vectorAt / F64_BYTES);
    this.kernels.rowDots(this.gramAt, p, this.everyRowAt, p, this.vectorAt, this.outAt);
    out.set(this.heap.subarray(this.outAt / F64_BYTES, this.outAt / F64_BYTES + p));
  }

  /** A copy of G, row-major. */
  toArray(): Float64Array {
    const start = this.gramAt / F64_BYTES;
    return this.heap.slice(start, start + this.dim * this.dim);
  }

  private addRows({ values, rowCount, weight }: WeightedRows): void {
    const p = this.dim;
    const s = GRAM_PANEL_ROWS;
    const heap = this.heap;
    const panel = this.panelAt / F64_BYTES;
    const weighted = this.weightedAt / F64_BYTES;
    for (let r = 0; r < rowCount; r++) {
      const t = this.panelFill;
      const base = r * p;
      for (let j = 0; j < p; j++) {
        const a = values[base + j];
        heap[panel + j * s + t] = a;
        heap[weighted + j * s + t] = weight * a;
      }
      this.panelFill++;
      if (this.panelFill === s) this.addPanel();
    }
  }

  private addPanel(): void {
    this.kernels.gramUpper(this.panelAt, GRAM_PANEL_ROWS, this.weightedAt, this.dim, this.gramAt);
    this.panelFill = 0;
  }

  /** Adds a partial panel, its empty rows zeroed. */
  private flushPanel(): void {
    if (this.panelFill === 0) return;
    const s = GRAM_PANEL_ROWS;
    const panel = this.panelAt / F64_BYTES;
    const weighted = this.weightedAt / F64_BYTES;
    for (let j = 0; j < this.dim; j++) {
      this.heap.fill(0, panel + j * s + this.panelFill, panel + (j + 1) * s);
      this.heap.fill(0, weighted + j * s + this.panelFill, weighted + (j + 1) * s);
    }
    this.addPanel();
  }

  private mirrorUpperTriangle(): void {
    const p = this.dim;
    const g = this.gramAt / F64_BYTES;
    for (let j = 0; j < p; j++) {
      for (let k = j + 1; k < p; k++) this.heap[g + k * p + j] = this.heap[g + j * p + k];
    }
  }
}
