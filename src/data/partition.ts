// Partitioners: how a labelled pool of samples is spread over m clients. Each returns, per
// client, the ascending list of pool indices it holds; every index lands in exactly one client,
// every client gets at least one sample, and the result is a pure function of the inputs and
// the Rng's stream.
//
//   iid        seeded shuffle, then consecutive blocks of given sizes or of near-equal size
//   dirichlet  label skew: for each class, the clients' shares ~ Dir(alpha, ..., alpha) and the
//              class's (shuffled) indices are cut by those shares (common practice, e.g.
//              Yurochkin et al., ICML 2019)
//   shards     sort by label, cut into m * classesPerClient shards, deal them out seeded
//              (McMahan et al., AISTATS 2017, pathological non-iid split)
//   natural    group by a key: one client per distinct key value, so the client count must equal
//              the number of values; client i holds the i-th value in sorted order (numbers
//              ascending, then strings by UTF-16 code units), which needs no seed

import type { Scenario } from '../scenario/schema.js';
import { DataError } from './data-error.js';
import type { Rng } from '../base/rng.js';

export type PartitionSpec = Scenario['data']['partition'];

export interface LabelledPool {
  /** class index per sample: integers in [0, classes) */
  labels: ArrayLike<number>;
  /** natural partition: a group key per sample (absent when the data has none) */
  keys?: ArrayLike<string | number>;
}

/** Bounds the redraws of a Dirichlet split that left a client empty. */
export const DIRICHLET_ATTEMPTS_MAX = 1000;

function identity(count: number): Uint32Array {
  const indices = new Uint32Array(count);
  for (let i = 0; i < count; i++) indices[i] = i;
  return indices;
}

function sortedCopies(lists: number[][]): Uint32Array[] {
  return lists.map((list) => {
    const out = Uint32Array.from(list);
    out.sort();
    return out;
  });
}

function requireEnoughSamples(poolSize: number, clientCount: number, fieldPath: string): void {
  if (poolSize < clientCount) {
    throw new DataError(
      'E_DATA_SPEC',
      `${poolSize} samples cannot give each of ${clientCount} clients at least one (${fieldPath})`,
      fieldPath,
    );
  }
}

/** Near-equal block sizes: the first (total mod m) clients get one sample more. */
export function nearEqualSizes(total: number, clientCount: number): number[] {
  const base = Math.floor(total / clientCount);
  const extra = total % clientCount;
  return Array.from({ length: clientCount }, (_, i) => base + (i < extra ? 1 : 0));
}

/** iid: a seeded shuffle of the pool cut into blocks of `sizes` (near-equal when absent). */
export function partitionIid(
  poolSize: number,
  clientCount: number,
  rng: Rng,
  sizes?: readonly number[],
): Uint32Array[] {
  requireEnoughSamples(poolSize, clientCount, 'clients.count');
  const blockSizes = sizes ?? nearEqualSizes(poolSize, clientCount);
  const total = blockSizes.reduce((sum, n) => sum + n, 0);
  if (
    blockSizes.length !== clientCount ||
    total !== poolSize ||
    blockSizes.some((n) => !(Number.isInteger(n) && n >= 1))
  ) {
    throw new DataError(
      'E_DATA_SPEC',
      `iid sizes must be ${clientCount} positive integers summing to ${poolSize}, got ${blockSizes.length} summing to ${total}`,
      'data.samplesPerClient',
    );
  }
  const order = identity(poolSize);
  rng.shuffleInPlace(order);
  const parts: Uint32Array[] = [];
  let start = 0;
  for (const n of blockSizes) {
    const part = order.slice(start, start + n);
    part.sort();
    parts.push(part);
    start += n;
  }
  return parts;
}

/** Pool indices grouped by label, each group ascending; labels must be integers in [0, 2^31). */
function indicesByLabel(labels: ArrayLike<number>): number[][] {
  const groups: number[][] = [];
  for (let i = 0; i < labels.length; i++) {
    const label = labels[i];
    if (!Number.isInteger(label) || label < 0 || label > 0x7fffffff) {
      throw new DataError(
        'E_DATA_SPEC',
        `label partitions need class indices; sample ${i} has label ${label}`,
        'data.partition',
      );
    }
    while (groups.length <= label) groups.push([]);
    groups[label].push(i);
  }
  return groups;
}

/**
 * Dirichlet label skew. A split that leaves some client with no sample is redrawn (from the
 * continuing stream, so still deterministic) up to DIRICHLET_ATTEMPTS_MAX times: an empty
 * client has no objective. That conditions the split on non-emptiness, a small tilt that only
 * matters when alpha is tiny or the pool barely exceeds the client count.
 */
export function partitionDirichlet(
  pool: LabelledPool,
  clientCount: number,
  alpha: number,
  rng: Rng,
): Uint32Array[] {
  requireEnoughSamples(pool.labels.length, clientCount, 'clients.count');
  if (!(alpha > 0) || !Number.isFinite(alpha)) {
    throw new DataError(
      'E_DATA_SPEC',
      `data.partition.alpha must be positive, got ${alpha}`,
      'data.partition.alpha',
    );
  }
  const classes = indicesByLabel(pool.labels);
  const concentration = new Float64Array(clientCount).fill(alpha);
  for (let attempt = 0; attempt < DIRICHLET_ATTEMPTS_MAX; attempt++) {
    const lists: number[][] = Array.from({ length: clientCount }, () => []);
    for (const members of classes) {
      if (members.length === 0) continue;
      const order = Uint32Array.from(members);
      rng.shuffleInPlace(order);
      const shares = rng.dirichlet(concentration);
      // Cut points at round(cumulative share * n_k); the last is pinned to n_k so that
      // rounding never loses or duplicates an index.
      let start = 0;
      let cumulative = 0;
      for (let client = 0; client < clientCount; client++) {
        cumulative += shares[client];
        const end =
          client === clientCount - 1
            ? order.length
            : Math.min(order.length, Math.round(cumulative * order.length));
        for (let i = start; i < end; i++) lists[client].push(order[i]);
        start = end;
      }
    }
    if (lists.every((list) => list.length > 0)) return sortedCopies(lists);
  }
  throw new DataError(
    'E_DATA_SPEC',
    `a Dirichlet split with alpha ${alpha} left a client empty in ${DIRICHLET_ATTEMPTS_MAX} draws; raise data.partition.alpha or lower clients.count`,
    'data.partition.alpha',
  );
}

/**
 * Label shards: the pool sorted by label (ties by index) is cut into m * c contiguous shards
 * of near-equal size, and each client receives c of them in a seeded deal. A client sees at
 * most c classes plus any that a shard boundary straddles.
 */
export function partitionShards(
  pool: LabelledPool,
  clientCount: number,
  classesPerClient: number,
  rng: Rng,
): Uint32Array[] {
  if (!Number.isInteger(classesPerClient) || classesPerClient < 1) {
    throw new DataError(
      'E_DATA_SPEC',
      `data.partition.classesPerClient must be a positive integer, got ${classesPerClient}`,
      'data.partition.classesPerClient',
    );
  }
  const shardCount = clientCount * classesPerClient;
  if (pool.labels.length < shardCount) {
    throw new DataError(
      'E_DATA_SPEC',
      `${pool.labels.length} samples cannot be cut into ${shardCount} shards (clients.count x data.partition.classesPerClient)`,
      'data.partition.classesPerClient',
    );
  }
  const byLabel = indicesByLabel(pool.labels).flat();
  const shardSizes = nearEqualSizes(byLabel.length, shardCount);
  const shardStarts = new Array<number>(shardCount);
  let offset = 0;
  for (let s = 0; s < shardCount; s++) {
    shardStarts[s] = offset;
    offset += shardSizes[s];
  }
  const deal = identity(shardCount);
  rng.shuffleInPlace(deal);
  const lists: number[][] = Array.from({ length: clientCount }, () => []);
  for (let position = 0; position < shardCount; position++) {
    const shard = deal[position];
    const client = Math.floor(position / classesPerClient);
    for (let i = shardStarts[shard]; i < shardStarts[shard] + shardSizes[shard]; i++)
      lists[client].push(byLabel[i]);
  }
  return sortedCopies(lists);
}

/** The distinct key values in client order: client i holds the samples of value i. */
export function naturalKeyOrder(keys: ArrayLike<string | number>): (string | number)[] {
  const distinct = new Set<string | number>();
  for (let i = 0; i < keys.length; i++) distinct.add(keys[i]);
  return [...distinct].sort(compareKeys);
}

/** A natural split has one client per key value: the scenario's client count must match. */
export function checkNaturalClientCount(
  valueCount: number,
  clientCount: number,
  keyName: string,
): void {
  if (valueCount !== clientCount) {
    throw new DataError(
      'E_DATA_SPEC',
      `a natural split by "${keyName}" has one client per value: ${valueCount} values, so clients.count must be ${valueCount}, got ${clientCount}`,
      'clients.count',
    );
  }
}

/** Samples per distinct key value, in naturalKeyOrder. */
export function naturalGroupSizes(keys: ArrayLike<string | number>): number[] {
  const counts = new Map<string | number, number>();
  for (let i = 0; i < keys.length; i++) counts.set(keys[i], (counts.get(keys[i]) ?? 0) + 1);
  return naturalKeyOrder(keys).map((key) => counts.get(key) as number);
}

/** Natural split: one client per distinct key value, in naturalKeyOrder. */
export function partitionNatural(
  pool: LabelledPool,
  clientCount: number,
  keyName: string,
): Uint32Array[] {
  const keys = pool.keys;
  if (keys === undefined) {
    throw new DataError(
      'E_DATA_SPEC',
      `data.partition.key "${keyName}" does not exist for this data`,
      'data.partition.key',
    );
  }
  const order = naturalKeyOrder(keys);
  checkNaturalClientCount(order.length, clientCount, keyName);
  const clientOf = new Map(order.map((key, client) => [key, client]));
  const lists: number[][] = Array.from({ length: clientCount }, () => []);
  for (let i = 0; i < keys.length; i++) lists[clientOf.get(keys[i]) as number].push(i);
  return sortedCopies(lists);
}

function compareKeys(a: string | number, b: string | number): number {
  if (typeof a === 'number' && typeof b === 'number') return a - b;
  if (typeof a !== typeof b) return typeof a === 'number' ? -1 : 1;
  return a < b ? -1 : a > b ? 1 : 0;
}

/** The scenario's partition applied to a pool; `sizes` are the iid block sizes when given. */
export function partitionPool(
  pool: LabelledPool,
  spec: PartitionSpec,
  clientCount: number,
  rng: Rng,
  sizes?: readonly number[],
): Uint32Array[] {
  switch (spec.kind) {
    case 'iid':
      return partitionIid(pool.labels.length, clientCount, rng, sizes);
    case 'dirichlet':
      return partitionDirichlet(pool, clientCount, spec.alpha, rng);
    case 'shards':
      return partitionShards(pool, clientCount, spec.classesPerClient, rng);
    case 'natural':
      return partitionNatural(pool, clientCount, spec.key);
  }
}
