// Dense Float64Array kernels. The hot path of every gradient: plain indexed loops, no
// allocation unless the name says so (`...New`). Dimensions are asserted by the caller that
// owns them; these loops trust their arguments for speed.

/** x . y */
export function dot(x: Float64Array, y: Float64Array): number {
  let sum = 0;
  for (let j = 0; j < x.length; j++) sum += x[j] * y[j];
  return sum;
}

/** y <- y + a x */
export function axpy(a: number, x: Float64Array, y: Float64Array): void {
  for (let j = 0; j < x.length; j++) y[j] += a * x[j];
}

/** x <- a x */
export function scale(a: number, x: Float64Array): void {
  for (let j = 0; j < x.length; j++) x[j] *= a;
}

/** ||x||_2^2 */
export function normSquared(x: Float64Array): number {
  let sum = 0;
  for (let j = 0; j < x.length; j++) sum += x[j] * x[j];
  return sum;
}

/** ||x||_2 */
export function norm2(x: Float64Array): number {
  return Math.sqrt(normSquared(x));
}

/** max_j |x_j| */
export function normInf(x: Float64Array): number {
  let best = 0;
  for (let j = 0; j < x.length; j++) {
    const a = Math.abs(x[j]);
    if (a > best) best = a;
  }
  return best;
}

/** ||x - y||_2^2 */
export function distanceSquared(x: Float64Array, y: Float64Array): number {
  let sum = 0;
  for (let j = 0; j < x.length; j++) {
    const d = x[j] - y[j];
    sum += d * d;
  }
  return sum;
}

/** out <- x - y */
export function subtract(x: Float64Array, y: Float64Array, out: Float64Array): void {
  for (let j = 0; j < x.length; j++) out[j] = x[j] - y[j];
}

/** out <- x + y */
export function add(x: Float64Array, y: Float64Array, out: Float64Array): void {
  for (let j = 0; j < x.length; j++) out[j] = x[j] + y[j];
}

/** out <- 0 */
export function zero(out: Float64Array): void {
  out.fill(0);
}

/** true when every entry is a finite number */
export function allFinite(x: Float64Array): boolean {
  for (let j = 0; j < x.length; j++) if (!Number.isFinite(x[j])) return false;
  return true;
}

/**
 * out <- A x for a row-major A of `rows` x `cols` (A.length === rows * cols).
 */
export function matVec(
  a: Float64Array,
  rows: number,
  cols: number,
  x: Float64Array,
  out: Float64Array,
): void {
  for (let r = 0; r < rows; r++) {
    let sum = 0;
    const base = r * cols;
    for (let c = 0; c < cols; c++) sum += a[base + c] * x[c];
    out[r] = sum;
  }
}

/**
 * out <- A^T y for a row-major A of `rows` x `cols`. Walks A row by row so that memory is read
 * in order; out must not alias y.
 */
export function matTVec(
  a: Float64Array,
  rows: number,
  cols: number,
  y: Float64Array,
  out: Float64Array,
): void {
  out.fill(0);
  for (let r = 0; r < rows; r++) {
    const yr = y[r];
    if (yr === 0) continue;
    const base = r * cols;
    for (let c = 0; c < cols; c++) out[c] += a[base + c] * yr;
  }
}
