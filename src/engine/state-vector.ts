// A method's full state (server plus every client) as one vector, for the theory's round map.
// States are plain data (DESIGN.md: the distributed runtime keeps them in other processes), so
// the Float64Array leaves, visited in a fixed order, are the whole numerical state; numbers,
// flags and integer arrays are carried over from a template unchanged.

export function float64Leaves(value: unknown, out: Float64Array[] = []): Float64Array[] {
  if (value instanceof Float64Array) {
    out.push(value);
  } else if (Array.isArray(value)) {
    for (const item of value) float64Leaves(item, out);
  } else if (value !== null && typeof value === 'object' && !ArrayBuffer.isView(value)) {
    for (const key of Object.keys(value).sort())
      float64Leaves((value as Record<string, unknown>)[key], out);
  }
  return out;
}

export function stateLength(template: unknown): number {
  return float64Leaves(template).reduce((n, leaf) => n + leaf.length, 0);
}

export function flattenState(state: unknown): Float64Array {
  const leaves = float64Leaves(state);
  const out = new Float64Array(leaves.reduce((n, leaf) => n + leaf.length, 0));
  let offset = 0;
  for (const leaf of leaves) {
    out.set(leaf, offset);
    offset += leaf.length;
  }
  return out;
}

/** A deep copy of the template whose Float64Array leaves hold the vector's entries. */
export function unflattenState<T>(template: T, vector: Float64Array): T {
  const copy = structuredClone(template);
  let offset = 0;
  for (const leaf of float64Leaves(copy)) {
    leaf.set(vector.subarray(offset, offset + leaf.length));
    offset += leaf.length;
  }
  if (offset !== vector.length)
    throw new Error(`state vector has ${vector.length} entries, the template ${offset}`);
  return copy;
}
