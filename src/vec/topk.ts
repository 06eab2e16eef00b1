// Top-k selection by magnitude in expected O(d): quickselect over an index array with a
// deterministic pivot sequence, so that runs repeat. Ties go to the lower index.

/** Strict order: a before b when |v_a| > |v_b|, or equal magnitude and a < b. */
function before(v: Float64Array, a: number, b: number): boolean {
  const ma = Math.abs(v[a]);
  const mb = Math.abs(v[b]);
  return ma > mb || (ma === mb && a < b);
}

/**
 * Indices of the k entries of largest magnitude, sorted ascending (the wire form wants sorted
 * indices for delta coding). k is clamped to [0, d].
 */
export function topKIndices(v: Float64Array, k: number): Uint32Array {
  const d = v.length;
  const kept = Math.max(0, Math.min(d, Math.floor(k)));
  if (kept === 0) return new Uint32Array(0);
  if (kept === d) return Uint32Array.from({ length: d }, (_, j) => j);
  const idx = new Uint32Array(d);
  for (let j = 0; j < d; j++) idx[j] = j;
  // Partition idx so that the first `kept` positions hold the k winners (Hoare-style
  // quickselect). The pivot is drawn by a fixed linear congruential sequence: deterministic,
  // yet it keeps adversarial inputs from forcing quadratic work in practice.
  let lo = 0;
  let hi = d - 1;
  let state = 0x9e3779b9 >>> 0;
  const target = kept - 1;
  while (lo < hi) {
    state = (Math.imul(state, 1664525) + 1013904223) >>> 0;
    const p = lo + (state % (hi - lo + 1));
    const pivot = idx[p];
    idx[p] = idx[hi];
    idx[hi] = pivot;
    let store = lo;
    for (let i = lo; i < hi; i++) {
      if (before(v, idx[i], pivot)) {
        const t = idx[i];
        idx[i] = idx[store];
        idx[store] = t;
        store++;
      }
    }
    idx[hi] = idx[store];
    idx[store] = pivot;
    if (store === target) break;
    if (store < target) lo = store + 1;
    else hi = store - 1;
  }
  const winners = idx.slice(0, kept);
  winners.sort();
  return winners;
}
