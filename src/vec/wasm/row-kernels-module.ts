// The row kernels as a WebAssembly module with 128-bit SIMD (two f64 lanes). Every argument that
// names an array is a byte offset into the module's memory. The arithmetic is IEEE binary64 with
// no fused multiply-add (core SIMD has none), so a kernel gives the same bits on every engine
// and every run; the summation order is the one documented on `dot` below, which
// test/vec/row-kernels.test.ts restates as a plain loop and compares bit for bit.

import {
  encodeModule,
  F64,
  I32,
  V128,
  op,
  signedLeb,
  unsignedLeb,
  type WasmFunction,
} from './wasm-binary.js';

/**
 * f64x2 accumulators in the dot product. Four of them (eight running partial sums) hide the
 * latency of the additions; the loop reads 8 entries an iteration.
 */
export const DOT_ACCUMULATORS = 4;
/** entries per iteration of the dot product's vector loop */
export const DOT_BLOCK = 2 * DOT_ACCUMULATORS;

const get = (local: number) => [op.localGet, ...unsignedLeb(local)];
const set = (local: number) => [op.localSet, ...unsignedLeb(local)];
const i32 = (value: number) => [op.i32Const, ...signedLeb(value)];
const simd = (code: number) => [op.simd, ...unsignedLeb(code)];
/** memory argument: alignment hint 2^3 (rows of odd length are only 8-byte aligned), offset */
const memarg = (offset: number) => [3, ...unsignedLeb(offset)];
const v128Load = (offset: number) => [...simd(op.v128Load), ...memarg(offset)];
const v128Store = (offset: number) => [...simd(op.v128Store), ...memarg(offset)];
const f64Load = [op.f64Load, ...memarg(0)];
const i32Load = [op.i32Load, 2, 0];

/** while (local < limit) { body; local += step } */
function countedLoop(local: number, limit: number, step: number, body: number[]): number[] {
  return [
    op.block,
    0x40,
    op.loop,
    0x40,
    ...get(local),
    ...get(limit),
    op.i32GeU,
    op.brIf,
    1,
    ...body,
    ...get(local),
    ...i32(step),
    op.i32Add,
    ...set(local),
    op.br,
    0,
    op.end,
    op.end,
  ];
}

const DOT = 0;
const AXPY = 1;

/**
 * dot(a, x, n): sum_j a_j x_j. Entries below n - n mod 8 go to eight partial sums s_k over
 * j = k (mod 8); they are combined as ((s0 + s2) + (s4 + s6)) + ((s1 + s3) + (s5 + s7)), and the
 * last n mod 8 products are then added one by one in order.
 */
function dotFunction(): WasmFunction {
  const [a, x, n, i, blockEnd, end, pa, px] = [0, 1, 2, 3, 4, 5, 6, 7];
  const acc = Array.from({ length: DOT_ACCUMULATORS }, (_, k) => 8 + k);
  const s = 8 + DOT_ACCUMULATORS;
  const accumulate = acc.flatMap((local, k) => [
    ...get(local),
    ...get(pa),
    ...v128Load(16 * k),
    ...get(px),
    ...v128Load(16 * k),
    ...simd(op.f64x2Mul),
    ...simd(op.f64x2Add),
    ...set(local),
  ]);
  const pairwise = (left: number, right: number) => [
    ...get(left),
    ...get(right),
    ...simd(op.f64x2Add),
    ...set(left),
  ];
  return {
    exportName: 'dot',
    params: [I32, I32, I32],
    results: [F64],
    locals: [I32, I32, I32, I32, I32, ...acc.map(() => V128), F64],
    code: [
      ...get(n),
      ...i32(-DOT_BLOCK),
      op.i32And,
      ...i32(3),
      op.i32Shl,
      ...set(blockEnd),
      ...get(n),
      ...i32(3),
      op.i32Shl,
      ...set(end),
      ...countedLoop(i, blockEnd, 16 * DOT_ACCUMULATORS, [
        ...get(a),
        ...get(i),
        op.i32Add,
        ...set(pa),
        ...get(x),
        ...get(i),
        op.i32Add,
        ...set(px),
        ...accumulate,
      ]),
      ...pairwise(acc[0], acc[1]),
      ...pairwise(acc[2], acc[3]),
      ...pairwise(acc[0], acc[2]),
      ...get(acc[0]),
      ...simd(op.f64x2ExtractLane),
      0,
      ...get(acc[0]),
      ...simd(op.f64x2ExtractLane),
      1,
      op.f64Add,
      ...set(s),
      ...countedLoop(i, end, 8, [
        ...get(s),
        ...get(a),
        ...get(i),
        op.i32Add,
        ...f64Load,
        ...get(x),
        ...get(i),
        op.i32Add,
        ...f64Load,
        op.f64Mul,
        op.f64Add,
        ...set(s),
      ]),
      ...get(s),
    ],
  };
}

/** axpy(alpha, a, y, n): y_j <- y_j + alpha a_j, the same bits as the scalar loop. */
function axpyFunction(): WasmFunction {
  const [alpha, a, y, n, i, blockEnd, end, pa, py, va] = [0, 1, 2, 3, 4, 5, 6, 7, 8, 9];
  const update = [0, 1, 2, 3].flatMap((k) => [
    ...get(py),
    ...get(py),
    ...v128Load(16 * k),
    ...get(va),
    ...get(pa),
    ...v128Load(16 * k),
    ...simd(op.f64x2Mul),
    ...simd(op.f64x2Add),
    ...v128Store(16 * k),
  ]);
  return {
    exportName: 'axpy',
    params: [F64, I32, I32, I32],
    results: [],
    locals: [I32, I32, I32, I32, I32, V128],
    code: [
      ...get(alpha),
      ...simd(op.f64x2Splat),
      ...set(va),
      ...get(n),
      ...i32(-8),
      op.i32And,
      ...i32(3),
      op.i32Shl,
      ...set(blockEnd),
      ...get(n),
      ...i32(3),
      op.i32Shl,
      ...set(end),
      ...countedLoop(i, blockEnd, 64, [
        ...get(a),
        ...get(i),
        op.i32Add,
        ...set(pa),
        ...get(y),
        ...get(i),
        op.i32Add,
        ...set(py),
        ...update,
      ]),
      ...countedLoop(i, end, 8, [
        ...get(y),
        ...get(i),
        op.i32Add,
        ...set(py),
        ...get(py),
        ...get(py),
        ...f64Load,
        ...get(alpha),
        ...get(a),
        ...get(i),
        op.i32Add,
        ...f64Load,
        op.f64Mul,
        op.f64Add,
        op.f64Store,
        3,
        0,
      ]),
    ],
  };
}

/**
 * A loop over the listed rows of a row-major matrix (`rows` holds u32 row numbers, `count` of
 * them), with the row's byte offset in local `row` for the body.
 */
function overRows(
  locals: {
    a: number;
    d: number;
    rows: number;
    count: number;
    t: number;
    end: number;
    row: number;
  },
  body: number[],
): number[] {
  const { a, d, rows, count, t, end, row } = locals;
  return [
    ...get(rows),
    ...set(t),
    ...get(rows),
    ...get(count),
    ...i32(2),
    op.i32Shl,
    op.i32Add,
    ...set(end),
    ...countedLoop(t, end, 4, [
      ...get(a),
      ...get(t),
      ...i32Load,
      ...get(d),
      op.i32Mul,
      ...i32(3),
      op.i32Shl,
      op.i32Add,
      ...set(row),
      ...body,
    ]),
  ];
}

/**
 * residualRows(A, d, rows, count, x, b, out): for each listed row s in order,
 * out <- out + (a_s . x - b_s) a_s: the least-squares gradient's sum in one pass per row.
 */
function residualRowsFunction(): WasmFunction {
  const [a, d, rows, count, x, b, out, t, end, row, r] = [0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10];
  return {
    exportName: 'residualRows',
    params: [I32, I32, I32, I32, I32, I32, I32],
    results: [],
    locals: [I32, I32, I32, F64],
    code: overRows({ a, d, rows, count, t, end, row }, [
      ...get(row),
      ...get(x),
      ...get(d),
      op.call,
      DOT,
      ...get(b),
      ...get(t),
      ...i32Load,
      ...i32(3),
      op.i32Shl,
      op.i32Add,
      ...f64Load,
      op.f64Sub,
      ...set(r),
      ...get(r),
      ...get(row),
      ...get(out),
      ...get(d),
      op.call,
      AXPY,
    ]),
  };
}

/** rowDots(A, d, rows, count, x, z): z_t <- a_{rows_t} . x */
function rowDotsFunction(): WasmFunction {
  const [a, d, rows, count, x, z, t, end, row, pz] = [0, 1, 2, 3, 4, 5, 6, 7, 8, 9];
  return {
    exportName: 'rowDots',
    params: [I32, I32, I32, I32, I32, I32],
    results: [],
    locals: [I32, I32, I32, I32],
    code: [
      ...get(z),
      ...set(pz),
      ...overRows({ a, d, rows, count, t, end, row }, [
        ...get(pz),
        ...get(row),
        ...get(x),
        ...get(d),
        op.call,
        DOT,
        op.f64Store,
        3,
        0,
        ...get(pz),
        ...i32(8),
        op.i32Add,
        ...set(pz),
      ]),
    ],
  };
}

/** rowCombine(A, d, rows, count, w, out): out <- out + w_t a_{rows_t}, t in order */
function rowCombineFunction(): WasmFunction {
  const [a, d, rows, count, w, out, t, end, row, pw] = [0, 1, 2, 3, 4, 5, 6, 7, 8, 9];
  return {
    exportName: 'rowCombine',
    params: [I32, I32, I32, I32, I32, I32],
    results: [],
    locals: [I32, I32, I32, I32],
    code: [
      ...get(w),
      ...set(pw),
      ...overRows({ a, d, rows, count, t, end, row }, [
        ...get(pw),
        ...f64Load,
        ...get(row),
        ...get(out),
        ...get(d),
        op.call,
        AXPY,
        ...get(pw),
        ...i32(8),
        op.i32Add,
        ...set(pw),
      ]),
    ],
  };
}

/** The module's bytes; function indices follow this order (DOT = 0, AXPY = 1). */
export function rowKernelsModuleBytes(): Uint8Array {
  return encodeModule([
    dotFunction(),
    axpyFunction(),
    residualRowsFunction(),
    rowDotsFunction(),
    rowCombineFunction(),
  ]);
}

export interface RowKernelExports {
  dot(a: number, x: number, n: number): number;
  axpy(alpha: number, a: number, y: number, n: number): void;
  residualRows(
    a: number,
    d: number,
    rows: number,
    count: number,
    x: number,
    b: number,
    out: number,
  ): void;
  rowDots(a: number, d: number, rows: number, count: number, x: number, z: number): void;
  rowCombine(a: number, d: number, rows: number, count: number, w: number, out: number): void;
}
