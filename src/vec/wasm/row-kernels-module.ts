// The row kernels as a WebAssembly module with 128-bit SIMD (two f64 lanes). Every argument that
// names an array is a byte offset into the module's memory. The arithmetic is IEEE binary64 with
// no fused multiply-add (core SIMD has none), so a kernel gives the same bits on every engine
// and every run; the summation order is the one documented on `dot` below, which
// test/vec/row-matrix.test.ts restates as a plain loop and compares bit for bit.
//
// Rows go through the kernels two at a time: the two dot products share the loads of x, and the
// two rows are added into the output with one load and one store of it, as
// out_j <- (out_j + w_0 a_0j) + w_1 a_1j: the same operations, in the same order, as one row
// after the other, with fewer memory accesses (least-squares gradient, n = 20, d = 1,000, in the
// bench: 6.9 GFLOP/s one row at a time, 10.0 two at a time; row-matrix.ts has the rest).

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
 * f64x2 accumulators per dot product. Four of them (eight running partial sums) hide the
 * latency of the additions; the loop reads 8 entries of each row an iteration.
 */
export const DOT_ACCUMULATORS = 4;
/** entries per iteration of the dot product's vector loop */
export const DOT_BLOCK = 2 * DOT_ACCUMULATORS;
/** entries per iteration of the row update's vector loop */
const AXPY_BLOCK = 8;

const get = (local: number) => [op.localGet, ...unsignedLeb(local)];
const set = (local: number) => [op.localSet, ...unsignedLeb(local)];
const i32 = (value: number) => [op.i32Const, ...signedLeb(value)];
const simd = (code: number) => [op.simd, ...unsignedLeb(code)];
/** memory argument: alignment hint 2^3 (rows of odd length are only 8-byte aligned), offset */
const memarg = (offset: number) => [3, ...unsignedLeb(offset)];
const v128Load = (offset: number) => [...simd(op.v128Load), ...memarg(offset)];
const v128Store = (offset: number) => [...simd(op.v128Store), ...memarg(offset)];
const f64Load = [op.f64Load, ...memarg(0)];
const f64Store = [op.f64Store, ...memarg(0)];
/** base + offset, both locals */
const address = (base: number, offset: number) => [...get(base), ...get(offset), op.i32Add];
/** local <- (count & -block) << 3: the bytes the vector loop covers */
const blockBytes = (count: number, block: number, local: number) => [
  ...get(count),
  ...i32(-block),
  op.i32And,
  ...i32(3),
  op.i32Shl,
  ...set(local),
];

/** while (local < limit) { body; local += step } */
// prettier-ignore
function countedLoop(local: number, limit: number, step: number, body: number[]): number[] {
  return [
    op.block, 0x40, op.loop, 0x40,
    ...get(local), ...get(limit), op.i32GeU, op.brIf, 1,
    ...body,
    ...get(local), ...i32(step), op.i32Add, ...set(local),
    op.br, 0,
    op.end, op.end,
  ];
}

/**
 * dot_R(a_0 .. a_{R-1}, x, n) -> R sums a_r . x, for R = 1 or 2. In each, entries below
 * n - n mod 8 go to eight partial sums s_k over j = k (mod 8); they are combined as
 * ((s0 + s2) + (s4 + s6)) + ((s1 + s3) + (s5 + s7)), and the last n mod 8 products are then
 * added one by one in order.
 */
// prettier-ignore
function dotFunction(rowsAtOnce: 1 | 2): WasmFunction {
  const rowsParams = Array.from({ length: rowsAtOnce }, (_, r) => r);
  const x = rowsAtOnce;
  const n = x + 1;
  const [i, blockEnd, end, px] = [n + 1, n + 2, n + 3, n + 4];
  const pa = rowsParams.map((r) => n + 5 + r);
  const acc = rowsParams.map((r) =>
    Array.from({ length: DOT_ACCUMULATORS }, (_, k) => n + 5 + rowsAtOnce + r * DOT_ACCUMULATORS + k),
  );
  const sum = rowsParams.map((r) => n + 5 + rowsAtOnce * (1 + DOT_ACCUMULATORS) + r);
  const accumulate = acc.flatMap((rowAcc, r) =>
    rowAcc.flatMap((local, k) => [
      ...get(local),
      ...get(pa[r]), ...v128Load(16 * k),
      ...get(px), ...v128Load(16 * k),
      ...simd(op.f64x2Mul), ...simd(op.f64x2Add), ...set(local),
    ]),
  );
  const fold = (left: number, right: number) => [...get(left), ...get(right), ...simd(op.f64x2Add), ...set(left)];
  const reduce = acc.flatMap((rowAcc, r) => [
    ...fold(rowAcc[0], rowAcc[1]),
    ...fold(rowAcc[2], rowAcc[3]),
    ...fold(rowAcc[0], rowAcc[2]),
    ...get(rowAcc[0]), ...simd(op.f64x2ExtractLane), 0,
    ...get(rowAcc[0]), ...simd(op.f64x2ExtractLane), 1,
    op.f64Add, ...set(sum[r]),
  ]);
  const tail = rowsParams.flatMap((r) => [
    ...get(sum[r]),
    ...address(r, i), ...f64Load,
    ...address(x, i), ...f64Load,
    op.f64Mul, op.f64Add, ...set(sum[r]),
  ]);
  return {
    exportName: rowsAtOnce === 1 ? 'dot' : 'dot2',
    params: [...rowsParams.map(() => I32), I32, I32],
    results: rowsParams.map(() => F64),
    locals: [I32, I32, I32, I32, ...pa.map(() => I32), ...acc.flat().map(() => V128), ...sum.map(() => F64)],
    code: [
      ...blockBytes(n, DOT_BLOCK, blockEnd),
      ...get(n), ...i32(3), op.i32Shl, ...set(end),
      ...countedLoop(i, blockEnd, 8 * DOT_BLOCK, [
        ...rowsParams.flatMap((r) => [...address(r, i), ...set(pa[r])]),
        ...address(x, i), ...set(px),
        ...accumulate,
      ]),
      ...reduce,
      ...countedLoop(i, end, 8, tail),
      ...sum.flatMap((local) => get(local)),
    ],
  };
}

/**
 * axpy_R(w_0 .. w_{R-1}, a_0 .. a_{R-1}, y, n): y_j <- (y_j + w_0 a_0j) + w_1 a_1j (R = 2) or
 * y_j + w_0 a_0j (R = 1): the bits of the scalar loops row after row.
 */
// prettier-ignore
function axpyFunction(rowsAtOnce: 1 | 2): WasmFunction {
  const rowsParams = Array.from({ length: rowsAtOnce }, (_, r) => r);
  const w = rowsParams;
  const a = rowsParams.map((r) => rowsAtOnce + r);
  const y = 2 * rowsAtOnce;
  const n = y + 1;
  const [i, blockEnd, end, py] = [n + 1, n + 2, n + 3, n + 4];
  const pa = rowsParams.map((r) => n + 5 + r);
  const splat = rowsParams.map((r) => n + 5 + rowsAtOnce + r);
  const update = [0, 1, 2, 3].flatMap((k) => [
    ...get(py),
    ...get(py), ...v128Load(16 * k),
    ...rowsParams.flatMap((r) => [
      ...get(splat[r]), ...get(pa[r]), ...v128Load(16 * k), ...simd(op.f64x2Mul), ...simd(op.f64x2Add),
    ]),
    ...v128Store(16 * k),
  ]);
  const scalarUpdate = [
    ...address(y, i), ...set(py),
    ...get(py),
    ...get(py), ...f64Load,
    ...rowsParams.flatMap((r) => [...get(w[r]), ...address(a[r], i), ...f64Load, op.f64Mul, op.f64Add]),
    ...f64Store,
  ];
  return {
    exportName: rowsAtOnce === 1 ? 'axpy' : 'axpy2',
    params: [...w.map(() => F64), ...a.map(() => I32), I32, I32],
    results: [],
    locals: [I32, I32, I32, I32, ...pa.map(() => I32), ...splat.map(() => V128)],
    code: [
      ...rowsParams.flatMap((r) => [...get(w[r]), ...simd(op.f64x2Splat), ...set(splat[r])]),
      ...blockBytes(n, AXPY_BLOCK, blockEnd),
      ...get(n), ...i32(3), op.i32Shl, ...set(end),
      ...countedLoop(i, blockEnd, 8 * AXPY_BLOCK, [
        ...rowsParams.flatMap((r) => [...address(a[r], i), ...set(pa[r])]),
        ...address(y, i), ...set(py),
        ...update,
      ]),
      ...countedLoop(i, end, 8, scalarUpdate),
    ],
  };
}

const DOT = 0;
const DOT2 = 1;
const AXPY = 2;
const AXPY2 = 3;

interface RowWalk {
  /** parameters */
  a: number;
  d: number;
  rows: number;
  count: number;
  /** locals: list cursor, end of the list, end of the pairs, the two rows' byte offsets */
  t: number;
  end: number;
  pairsEnd: number;
  row0: number;
  row1: number;
}

/** byte offset of the row numbered at list entry t + 4 k */
// prettier-ignore
const rowAt = (walk: RowWalk, k: number, local: number) => [
  ...get(walk.a),
  ...get(walk.t), op.i32Load, 2, ...unsignedLeb(4 * k),
  ...get(walk.d), op.i32Mul, ...i32(3), op.i32Shl, op.i32Add, ...set(local),
];

/**
 * The listed rows (`rows`: u32 row numbers, `count` of them), two at a time through `pair`,
 * the last one of an odd count through `single`.
 */
// prettier-ignore
function walkRows(walk: RowWalk, pair: number[], single: number[], step: { pair: number[]; single: number[] }): number[] {
  const { rows, count, t, end, pairsEnd, row0, row1 } = walk;
  return [
    ...get(rows), ...set(t),
    ...get(rows), ...get(count), ...i32(2), op.i32Shl, op.i32Add, ...set(end),
    ...get(rows), ...get(count), ...i32(-2), op.i32And, ...i32(2), op.i32Shl, op.i32Add, ...set(pairsEnd),
    ...countedLoop(t, pairsEnd, 8, [...rowAt(walk, 0, row0), ...rowAt(walk, 1, row1), ...pair, ...step.pair]),
    ...countedLoop(t, end, 4, [...rowAt(walk, 0, row0), ...single, ...step.single]),
  ];
}

const walkLocals = [I32, I32, I32, I32, I32];

/**
 * residualRows(A, d, rows, count, x, b, out): for each listed row s in order,
 * out <- out + (a_s . x - b_s) a_s: the least-squares gradient's sum.
 */
// prettier-ignore
function residualRowsFunction(): WasmFunction {
  const [a, d, rows, count, x, b, out] = [0, 1, 2, 3, 4, 5, 6];
  const walk: RowWalk = { a, d, rows, count, t: 7, end: 8, pairsEnd: 9, row0: 10, row1: 11 };
  const [r0, r1] = [12, 13];
  /** b at the row numbered at list entry t + 4 k */
  const target = (k: number) => [
    ...get(b), ...get(walk.t), op.i32Load, 2, ...unsignedLeb(4 * k), ...i32(3), op.i32Shl, op.i32Add, ...f64Load,
  ];
  return {
    exportName: 'residualRows',
    params: [I32, I32, I32, I32, I32, I32, I32],
    results: [],
    locals: [...walkLocals, F64, F64],
    code: walkRows(
      walk,
      [
        ...get(walk.row0), ...get(walk.row1), ...get(x), ...get(d), op.call, DOT2,
        ...target(1), op.f64Sub, ...set(r1),
        ...target(0), op.f64Sub, ...set(r0),
        ...get(r0), ...get(r1), ...get(walk.row0), ...get(walk.row1), ...get(out), ...get(d), op.call, AXPY2,
      ],
      [
        ...get(walk.row0), ...get(x), ...get(d), op.call, DOT,
        ...target(0), op.f64Sub, ...set(r0),
        ...get(r0), ...get(walk.row0), ...get(out), ...get(d), op.call, AXPY,
      ],
      { pair: [], single: [] },
    ),
  };
}

/** rowDots(A, d, rows, count, x, z): z_t <- a_{rows_t} . x */
// prettier-ignore
function rowDotsFunction(): WasmFunction {
  const [a, d, rows, count, x, z] = [0, 1, 2, 3, 4, 5];
  const walk: RowWalk = { a, d, rows, count, t: 6, end: 7, pairsEnd: 8, row0: 9, row1: 10 };
  const [pz, second] = [11, 12];
  return {
    exportName: 'rowDots',
    params: [I32, I32, I32, I32, I32, I32],
    results: [],
    locals: [...walkLocals, I32, F64],
    code: [
      ...get(z), ...set(pz),
      ...walkRows(
        walk,
        [
          ...get(pz),
          ...get(walk.row0), ...get(walk.row1), ...get(x), ...get(d), op.call, DOT2,
          ...set(second), ...f64Store,
          ...get(pz), ...get(second), op.f64Store, 3, 8,
        ],
        [...get(pz), ...get(walk.row0), ...get(x), ...get(d), op.call, DOT, ...f64Store],
        {
          pair: [...get(pz), ...i32(16), op.i32Add, ...set(pz)],
          single: [...get(pz), ...i32(8), op.i32Add, ...set(pz)],
        },
      ),
    ],
  };
}

/** rowCombine(A, d, rows, count, w, out): out <- out + w_t a_{rows_t}, t in order */
// prettier-ignore
function rowCombineFunction(): WasmFunction {
  const [a, d, rows, count, w, out] = [0, 1, 2, 3, 4, 5];
  const walk: RowWalk = { a, d, rows, count, t: 6, end: 7, pairsEnd: 8, row0: 9, row1: 10 };
  const pw = 11;
  return {
    exportName: 'rowCombine',
    params: [I32, I32, I32, I32, I32, I32],
    results: [],
    locals: [...walkLocals, I32],
    code: [
      ...get(w), ...set(pw),
      ...walkRows(
        walk,
        [
          ...get(pw), ...f64Load, ...get(pw), op.f64Load, 3, 8,
          ...get(walk.row0), ...get(walk.row1), ...get(out), ...get(d), op.call, AXPY2,
        ],
        [...get(pw), ...f64Load, ...get(walk.row0), ...get(out), ...get(d), op.call, AXPY],
        {
          pair: [...get(pw), ...i32(16), op.i32Add, ...set(pw)],
          single: [...get(pw), ...i32(8), op.i32Add, ...set(pw)],
        },
      ),
    ],
  };
}

/**
 * rowProjectCombine(A, d, rows, count, c, x, out): for each listed row s in order (t its place in
 * the list), out <- out + (c_t (a_s . x)) a_s: a Hessian-vector product's two sums in one pass
 * over each row, with the bits of rowDots followed by rowCombine with weights c_t z_t.
 */
// prettier-ignore
function rowProjectCombineFunction(): WasmFunction {
  const [a, d, rows, count, c, x, out] = [0, 1, 2, 3, 4, 5, 6];
  const walk: RowWalk = { a, d, rows, count, t: 7, end: 8, pairsEnd: 9, row0: 10, row1: 11 };
  const pc = 12;
  const [w0, w1] = [13, 14];
  return {
    exportName: 'rowProjectCombine',
    params: [I32, I32, I32, I32, I32, I32, I32],
    results: [],
    locals: [...walkLocals, I32, F64, F64],
    code: [
      ...get(c), ...set(pc),
      ...walkRows(
        walk,
        [
          ...get(walk.row0), ...get(walk.row1), ...get(x), ...get(d), op.call, DOT2,
          ...set(w1), ...set(w0),
          ...get(pc), ...f64Load, ...get(w0), op.f64Mul, ...set(w0),
          ...get(pc), op.f64Load, 3, 8, ...get(w1), op.f64Mul, ...set(w1),
          ...get(w0), ...get(w1), ...get(walk.row0), ...get(walk.row1), ...get(out), ...get(d), op.call, AXPY2,
        ],
        [
          ...get(walk.row0), ...get(x), ...get(d), op.call, DOT, ...set(w0),
          ...get(pc), ...f64Load, ...get(w0), op.f64Mul, ...set(w0),
          ...get(w0), ...get(walk.row0), ...get(out), ...get(d), op.call, AXPY,
        ],
        {
          pair: [...get(pc), ...i32(16), op.i32Add, ...set(pc)],
          single: [...get(pc), ...i32(8), op.i32Add, ...set(pc)],
        },
      ),
    ],
  };
}

/**
 * gramUpper(q, s, w, d, g): g_jk <- g_jk + q_k . w_j for every j in [0, d) and k in [j, d), where
 * q and w hold d rows of s entries each (a panel of s data rows, transposed: row j of q is the
 * panel's column j, row j of w the same column times each data row's weight) and g is d x d,
 * row-major. Each g_jk gains one dot product in the order of `dot`; the k go two at a time
 * through dot2 (sharing the loads of w_j), the last of an odd count through dot. (A variant that
 * took two j and two k at a time, one load per multiply-add, measured within the noise of this.)
 */
// prettier-ignore
function gramUpperFunction(): WasmFunction {
  const [q, s, w, d, g] = [0, 1, 2, 3, 4];
  const [rowBytes, wj, wEnd, qj, qEnd, qk, pairsEnd, gk, gDiagonal, remaining] = [5, 6, 7, 8, 9, 10, 11, 12, 13, 14];
  const [first, second] = [15, 16];
  const add = (local: number) => [op.i32Add, ...set(local)];
  /** while (local < limit) { body } */
  const whileBelow = (local: number, limit: number, body: number[]) => [
    op.block, 0x40, op.loop, 0x40,
    ...get(local), ...get(limit), op.i32GeU, op.brIf, 1,
    ...body,
    op.br, 0,
    op.end, op.end,
  ];
  /** g at gk + offset <- itself + value */
  const accumulate = (value: number, offset: number) => [
    ...get(gk), ...get(gk), op.f64Load, 3, ...unsignedLeb(offset), ...get(value), op.f64Add, op.f64Store, 3, ...unsignedLeb(offset),
  ];
  return {
    exportName: 'gramUpper',
    params: [I32, I32, I32, I32, I32],
    results: [],
    locals: [I32, I32, I32, I32, I32, I32, I32, I32, I32, I32, F64, F64],
    code: [
      ...get(s), ...i32(3), op.i32Shl, ...set(rowBytes),
      ...get(w), ...set(wj),
      ...get(d), ...get(rowBytes), op.i32Mul, ...get(w), ...add(wEnd),
      ...get(q), ...set(qj),
      ...get(d), ...get(rowBytes), op.i32Mul, ...get(q), ...add(qEnd),
      ...get(g), ...set(gDiagonal),
      ...get(d), ...set(remaining),
      ...whileBelow(wj, wEnd, [
        ...get(qj), ...set(qk),
        ...get(gDiagonal), ...set(gk),
        ...get(remaining), ...i32(-2), op.i32And, ...get(rowBytes), op.i32Mul, ...get(qj), ...add(pairsEnd),
        ...whileBelow(qk, pairsEnd, [
          ...get(qk), ...get(qk), ...get(rowBytes), op.i32Add, ...get(wj), ...get(s), op.call, DOT2,
          ...set(second), ...set(first),
          ...accumulate(first, 0),
          ...accumulate(second, 8),
          ...get(qk), ...get(rowBytes), op.i32Add, ...get(rowBytes), ...add(qk),
          ...get(gk), ...i32(16), ...add(gk),
        ]),
        ...whileBelow(qk, qEnd, [
          ...get(qk), ...get(wj), ...get(s), op.call, DOT, ...set(first),
          ...accumulate(first, 0),
          ...get(qk), ...get(rowBytes), ...add(qk),
        ]),
        ...get(wj), ...get(rowBytes), ...add(wj),
        ...get(qj), ...get(rowBytes), ...add(qj),
        ...get(gDiagonal), ...get(d), ...i32(3), op.i32Shl, op.i32Add, ...i32(8), ...add(gDiagonal),
        ...get(remaining), ...i32(-1), ...add(remaining),
      ]),
    ],
  };
}

/** The module's bytes; function indices follow this order (DOT, DOT2, AXPY, AXPY2). */
export function rowKernelsModuleBytes(): Uint8Array {
  return encodeModule([
    dotFunction(1),
    dotFunction(2),
    axpyFunction(1),
    axpyFunction(2),
    residualRowsFunction(),
    rowDotsFunction(),
    rowCombineFunction(),
    gramUpperFunction(),
    rowProjectCombineFunction(),
  ]);
}

export interface RowKernelExports {
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
  gramUpper(q: number, s: number, w: number, d: number, g: number): void;
  rowProjectCombine(
    a: number,
    d: number,
    rows: number,
    count: number,
    c: number,
    x: number,
    out: number,
  ): void;
}
