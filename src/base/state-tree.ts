// A runtime's state as two parts that any file or message can carry: a small JSON tree
// (numbers, booleans, strings, arrays, objects) and the float64 vectors lifted out of it, which
// travel as raw bytes. Methods keep their state as plain objects of numbers and typed arrays
// (src/algorithm), so one walk covers every method without knowing which it is.
//
// In the tree a Float64Array becomes {"$f64": index into the vectors}; a small integer array
// (FedSplit's joined flags) becomes {"$u8" | "$i32" | "$u32": [values]}; a number JSON cannot
// hold exactly (NaN, the infinities, -0) becomes {"$num": "NaN" | "Infinity" | "-Infinity" |
// "-0"}. Every other finite double survives JSON as it is: JavaScript prints the shortest text
// that reads back to the same bits.

import { CodedError } from '../base/coded-error.js';

/** A state tree is not what it should be (shape, lengths, references). */
export class StateTreeError extends CodedError<'E_STATE_TREE'> {}

export type StateJson =
  null | boolean | number | string | StateJson[] | { [key: string]: StateJson };

export interface FlatState {
  tree: StateJson;
  vectors: Float64Array[];
}

const INTEGER_ARRAYS = {
  $u8: Uint8Array,
  $i32: Int32Array,
  $u32: Uint32Array,
} as const;
type IntegerTag = keyof typeof INTEGER_ARRAYS;

const SPECIAL_NUMBERS: Record<string, number> = {
  NaN: Number.NaN,
  Infinity: Number.POSITIVE_INFINITY,
  '-Infinity': Number.NEGATIVE_INFINITY,
  '-0': -0,
};

/** Deepest nesting a state may have; method states nest two or three levels. */
export const STATE_DEPTH_MAX = 16;

function fail(path: string, message: string): never {
  throw new StateTreeError('E_STATE_TREE', `${path || 'state'}: ${message}`);
}

function integerTagOf(value: object): IntegerTag | null {
  for (const [tag, kind] of Object.entries(INTEGER_ARRAYS)) {
    if (value instanceof kind) return tag as IntegerTag;
  }
  return null;
}

function flattenValue(
  value: unknown,
  vectors: Float64Array[],
  path: string,
  depth: number,
): StateJson {
  if (depth > STATE_DEPTH_MAX) fail(path, `nested deeper than ${STATE_DEPTH_MAX}`);
  if (value === null || typeof value === 'boolean' || typeof value === 'string') return value;
  if (typeof value === 'number') {
    if (Number.isFinite(value) && !Object.is(value, -0)) return value;
    return { $num: Object.is(value, -0) ? '-0' : String(value) };
  }
  if (typeof value !== 'object') fail(path, `a ${typeof value} cannot be kept in a state`);
  if (value instanceof Float64Array) {
    vectors.push(value.slice());
    return { $f64: vectors.length - 1 };
  }
  const tag = integerTagOf(value);
  if (tag !== null) return { [tag]: Array.from(value as ArrayLike<number>) };
  if (Array.isArray(value))
    return value.map((v, i) => flattenValue(v, vectors, `${path}[${i}]`, depth + 1));
  if (Object.getPrototypeOf(value) !== Object.prototype)
    fail(path, `a ${value.constructor.name} cannot be kept in a state`);
  const out: Record<string, StateJson> = {};
  for (const [key, v] of Object.entries(value)) {
    if (key.startsWith('$')) fail(path, `key "${key}" is reserved for the tree's own markers`);
    if (v !== undefined)
      out[key] = flattenValue(v, vectors, path ? `${path}.${key}` : key, depth + 1);
  }
  return out;
}

/** Lifts every Float64Array out of `value` (copies: the state stays the caller's). */
export function flattenState(value: unknown): FlatState {
  const vectors: Float64Array[] = [];
  return { tree: flattenValue(value, vectors, '', 0), vectors };
}

function isRecord(value: unknown): value is Record<string, unknown> {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}

function markerOf(value: Record<string, unknown>): string | null {
  const keys = Object.keys(value);
  return keys.length === 1 && keys[0].startsWith('$') ? keys[0] : null;
}

function rebuildValue(
  value: unknown,
  vectors: readonly Float64Array[],
  path: string,
  depth: number,
): unknown {
  if (depth > STATE_DEPTH_MAX) fail(path, `nested deeper than ${STATE_DEPTH_MAX}`);
  if (value === null || typeof value === 'boolean' || typeof value === 'string') return value;
  if (typeof value === 'number') {
    if (!Number.isFinite(value)) fail(path, `${value} is not a JSON number`);
    return value;
  }
  if (Array.isArray(value))
    return value.map((v, i) => rebuildValue(v, vectors, `${path}[${i}]`, depth + 1));
  if (!isRecord(value)) fail(path, `a ${typeof value} is not part of a state tree`);
  const marker = markerOf(value);
  if (marker === '$f64') {
    const index = value.$f64;
    if (
      !Number.isSafeInteger(index) ||
      (index as number) < 0 ||
      (index as number) >= vectors.length
    )
      fail(path, `vector reference ${String(index)} outside the ${vectors.length} vectors`);
    return Float64Array.from(vectors[index as number]);
  }
  if (marker === '$num') {
    const text = value.$num;
    if (typeof text !== 'string' || !(text in SPECIAL_NUMBERS))
      fail(path, `"$num" must be one of ${Object.keys(SPECIAL_NUMBERS).join(', ')}`);
    return SPECIAL_NUMBERS[text];
  }
  if (marker !== null && marker in INTEGER_ARRAYS) {
    const items = value[marker];
    if (!Array.isArray(items) || !items.every((v) => Number.isSafeInteger(v)))
      fail(path, `"${marker}" must hold a list of integers`);
    return INTEGER_ARRAYS[marker as IntegerTag].from(items as number[]);
  }
  if (marker !== null) fail(path, `unknown marker "${marker}"`);
  const out: Record<string, unknown> = {};
  for (const [key, v] of Object.entries(value)) {
    if (key.startsWith('$')) fail(path, `key "${key}" is reserved for the tree's own markers`);
    out[key] = rebuildValue(v, vectors, path ? `${path}.${key}` : key, depth + 1);
  }
  return out;
}

/** The state a flattenState gave, rebuilt with fresh arrays; throws StateTreeError on a bad tree. */
export function rebuildState(flat: FlatState): unknown {
  return rebuildValue(flat.tree, flat.vectors, '', 0);
}

function kindOf(value: unknown): string {
  if (value === null) return 'null';
  if (value instanceof Float64Array) return 'Float64Array';
  if (typeof value === 'object') {
    const tag = integerTagOf(value);
    if (tag !== null) return INTEGER_ARRAYS[tag].name;
    return Array.isArray(value) ? 'array' : 'object';
  }
  return typeof value;
}

/**
 * Throws StateTreeError unless `value` has the shape of `reference` (a freshly made state of the
 * same kind): the same keys, kinds and array lengths, so that a state read from outside can
 * only ever replace a state the code itself would have built.
 */
export function assertSameShape(reference: unknown, value: unknown, path = ''): void {
  const kind = kindOf(reference);
  if (kindOf(value) !== kind) fail(path, `expected ${kind}, got ${kindOf(value)}`);
  if (ArrayBuffer.isView(reference) || Array.isArray(reference)) {
    const expected = (reference as ArrayLike<unknown>).length;
    const given = (value as ArrayLike<unknown>).length;
    if (given !== expected) fail(path, `expected length ${expected}, got ${given}`);
    if (Array.isArray(reference))
      reference.forEach((r, i) => assertSameShape(r, (value as unknown[])[i], `${path}[${i}]`));
    return;
  }
  if (kind !== 'object') return;
  const ref = reference as Record<string, unknown>;
  const val = value as Record<string, unknown>;
  const expectedKeys = Object.keys(ref).sort();
  const givenKeys = Object.keys(val).sort();
  if (expectedKeys.join(',') !== givenKeys.join(','))
    fail(path, `expected keys ${expectedKeys.join(', ')}, got ${givenKeys.join(', ')}`);
  for (const key of expectedKeys)
    assertSameShape(ref[key], val[key], path ? `${path}.${key}` : key);
}

/** Throws StateTreeError unless `value` maps names to float64 vectors of dimension `dim`. */
export function assertVectorsByName(value: unknown, dim: number, path: string): void {
  if (!isRecord(value) || ArrayBuffer.isView(value)) fail(path, 'expected vectors by name');
  for (const [name, v] of Object.entries(value)) {
    if (!(v instanceof Float64Array))
      fail(`${path}.${name}`, `expected Float64Array, got ${kindOf(v)}`);
    if (v.length !== dim) fail(`${path}.${name}`, `expected dimension ${dim}, got ${v.length}`);
  }
}

/** The vectors one after another as little-endian float64 values, whatever the machine's order. */
export function packVectors(vectors: readonly Float64Array[]): Uint8Array {
  const total = vectors.reduce((n, v) => n + v.length, 0);
  const bytes = new Uint8Array(total * 8);
  const view = new DataView(bytes.buffer);
  let offset = 0;
  for (const vector of vectors) {
    for (let j = 0; j < vector.length; j++, offset += 8) view.setFloat64(offset, vector[j], true);
  }
  return bytes;
}

/** packVectors undone, for vectors of the given lengths; throws StateTreeError when the bytes do not match them. */
export function unpackVectors(bytes: Uint8Array, lengths: readonly number[]): Float64Array[] {
  const total = lengths.reduce((n, l) => n + l, 0);
  if (total * 8 !== bytes.byteLength)
    fail('vectors', `${bytes.byteLength} bytes for ${total} float64 values`);
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const out: Float64Array[] = [];
  let offset = 0;
  for (const length of lengths) {
    const vector = new Float64Array(length);
    for (let j = 0; j < length; j++, offset += 8) vector[j] = view.getFloat64(offset, true);
    out.push(vector);
  }
  return out;
}
