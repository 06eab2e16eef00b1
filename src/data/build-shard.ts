// A client's shard as a pure function of (scenario, client id): any process (the engine, a
// worker hosting the client, the oracle rebuilding everything) gets the same bytes.
//
// Two layouts:
//   direct  synthetic data with an iid partition: client i draws its own n_i samples from its
//           own model x_i* and feature mean mu_i, on streams derived from (seed, 'shard', i).
//           Nothing is shared, so one shard costs only its own samples.
//   pooled  labelled synthetic data with a non-iid partition, and every data set: one pool
//           (synthetic: sum_i n_i samples of the common model x0 with mean-zero features, since
//           per-client models and shifts have no meaning before the split) is partitioned with
//           the stream (seed, 'partition'); client i takes its part. The heterogeneity then
//           comes from the partition alone. Pools are cached per data-relevant plan (a data
//           file's by its path and content hash, which the plan carries).
//
// Either way a client then holds out data.testFraction of its rows (test-part.ts): buildShard
// gives its training rows, the only rows any client, oracle or scaling sees; buildTestShard gives
// the rest, for the evaluation.

import type { Scenario } from '../scenario/schema.js';
import { dataSeedOf } from '../scenario/data-seed.js';
import { canonicalJson } from '../scenario/plan-hash.js';
import { featureScales } from './covariance.js';
import { DataError } from './data-error.js';
import { datasetPool } from './dataset-pool.js';
import { filePool } from './file-pool.js';
import { partitionPool, type LabelledPool } from './partition.js';
import { Rng } from '../base/rng.js';
import { samplesForAllClients, samplesForClient } from './sample-counts.js';
import type { Shard } from '../problem/shard.js';
import { drawSamples, type SampleKind, type SampleModel } from './synthetic.js';
import { standardizeOverRows } from './datasets.js';
import { pickRows, splitRows, testRowCount } from './test-part.js';
import {
  clientFeatureMean,
  clientMinimizer,
  parameterDimension,
  syntheticCentre,
} from './synthetic-models.js';

type SyntheticData = Extract<Scenario['data'], { source: 'synthetic' }>;

/** Bounds one pool or shard: 25e6 doubles (200 MB). */
export const DATA_VALUES_MAX = 25_000_000;
/** Pools kept in memory at once (a process normally needs one plan's pool). */
export const POOL_CACHE_ENTRIES_MAX = 4;

interface PooledData {
  featureCount: number;
  features: Float64Array;
  targets: Float64Array;
  /** each client's training rows of the pool */
  parts: Uint32Array[];
  /** each client's test rows of the pool (empty when nothing is held out) */
  testParts: Uint32Array[];
}

const poolCache = new Map<string, PooledData>();

function isDirect(scenario: Scenario): scenario is Scenario & { data: SyntheticData } {
  return scenario.data.source === 'synthetic' && scenario.data.partition.kind === 'iid';
}

function checkClientId(scenario: Scenario, clientId: number): void {
  if (!Number.isInteger(clientId) || clientId < 0 || clientId >= scenario.clients.count) {
    throw new DataError(
      'E_DATA_SPEC',
      `client id ${clientId} is outside [0, ${scenario.clients.count})`,
    );
  }
}

function checkValueCount(sampleCount: number, featureCount: number): void {
  if (sampleCount * featureCount > DATA_VALUES_MAX) {
    throw new DataError(
      'E_DATA_SPEC',
      `${sampleCount} samples x ${featureCount} features exceed the bound of ${DATA_VALUES_MAX} values`,
      'data.samplesPerClient',
    );
  }
}

function classCountOf(scenario: Scenario): number {
  return isMulticlass(scenario.problem.kind) ? scenario.problem.classes : 2;
}

function isMulticlass(kind: Scenario['problem']['kind']): boolean {
  return kind === 'softmax' || kind === 'perceptron';
}

/**
 * The model that labels synthetic samples: a perceptron learns from the samples softmax would
 * get with the same seed, so that the two can be compared on the same data.
 */
function sampleKindOf(kind: Scenario['problem']['kind']): SampleKind {
  return kind === 'perceptron' ? 'softmax' : kind;
}

function featureScalesOf(data: SyntheticData): Float64Array {
  return featureScales(data.features, data.conditionNumber);
}

/** Client clientId's every row, before its test part is held out. */
function directRows(scenario: Scenario & { data: SyntheticData }, clientId: number): Shard {
  const { problem, data } = scenario;
  const seed = dataSeedOf(scenario);
  const p = data.features;
  const sampleKind = sampleKindOf(problem.kind);
  const x0 = syntheticCentre(seed, parameterDimension(sampleKind, p, classCountOf(scenario)));
  const sampleCount = samplesForClient(
    data.samplesPerClient,
    scenario.clients.count,
    seed,
    clientId,
  );
  checkValueCount(sampleCount, p);
  const model: SampleModel = {
    kind: sampleKind,
    featureCount: p,
    classCount: classCountOf(scenario),
    featureScales: featureScalesOf(data),
    featureMean: clientFeatureMean(seed, p, data.covariateShift, clientId),
    model: clientMinimizer(seed, x0, data.minimizerSpread, clientId),
    noise: data.noise,
  };
  const samples = drawSamples(
    Rng.derive(seed, 'shard', clientId, 'features'),
    Rng.derive(seed, 'shard', clientId, 'targets'),
    model,
    sampleCount,
  );
  return { clientId, ...samples };
}

function syntheticPool(
  scenario: Scenario & { data: SyntheticData },
): LabelledPool & { features: Float64Array; targets: Float64Array } {
  const { problem, data } = scenario;
  const seed = dataSeedOf(scenario);
  if (problem.kind === 'least-squares') {
    throw new DataError(
      'E_DATA_SPEC',
      `data.partition "${data.partition.kind}" splits by label, but least-squares targets are real values; use "iid"`,
      'data.partition',
    );
  }
  const p = data.features;
  const total = samplesForAllClients(data.samplesPerClient, scenario.clients.count, seed).reduce(
    (sum, n) => sum + n,
    0,
  );
  checkValueCount(total, p);
  const sampleKind = sampleKindOf(problem.kind);
  const model: SampleModel = {
    kind: sampleKind,
    featureCount: p,
    classCount: classCountOf(scenario),
    featureScales: featureScalesOf(data),
    featureMean: new Float64Array(p),
    model: syntheticCentre(seed, parameterDimension(sampleKind, p, classCountOf(scenario))),
    noise: data.noise,
  };
  const samples = drawSamples(
    Rng.derive(seed, 'pool', 'features'),
    Rng.derive(seed, 'pool', 'targets'),
    model,
    total,
  );
  return { features: samples.features, targets: samples.targets, labels: samples.targets };
}

function pooledData(scenario: Scenario): PooledData {
  // Keys sorted: equal plans give equal cache keys whatever their key order.
  const key = canonicalJson({
    seed: dataSeedOf(scenario),
    kind: scenario.problem.kind,
    classes: scenario.problem.classes,
    data: scenario.data,
    clientCount: scenario.clients.count,
  });
  const cached = poolCache.get(key);
  if (cached !== undefined) return cached;

  let featureCount: number;
  let pool: LabelledPool & { features: Float64Array; targets: Float64Array };
  let columnsToStandardize: readonly number[] = [];
  if (scenario.data.source === 'synthetic') {
    featureCount = scenario.data.features;
    pool = syntheticPool(scenario as Scenario & { data: SyntheticData });
  } else if (scenario.data.source === 'file') {
    ({ featureCount, pool, columnsToStandardize } = filePool(scenario));
  } else {
    ({ featureCount, pool, columnsToStandardize } = datasetPool(scenario));
  }
  const wholeParts = partitionPool(
    pool,
    scenario.data.partition,
    scenario.clients.count,
    Rng.derive(dataSeedOf(scenario), 'partition'),
  );
  const splits = wholeParts.map((part, clientId) =>
    splitRows(dataSeedOf(scenario), clientId, part.length, scenario.data.testFraction),
  );
  const parts = wholeParts.map((part, id) => pickRows(part, splits[id].training));
  const testParts = wholeParts.map((part, id) => pickRows(part, splits[id].test));
  if (columnsToStandardize.length > 0)
    standardizeOverRows(pool.features, featureCount, columnsToStandardize, trainingRowsOf(parts));
  const entry: PooledData = {
    featureCount,
    features: pool.features,
    targets: pool.targets,
    parts,
    testParts,
  };

  if (poolCache.size >= POOL_CACHE_ENTRIES_MAX) {
    const oldest = poolCache.keys().next().value as string;
    poolCache.delete(oldest);
  }
  poolCache.set(key, entry);
  return entry;
}

/** Every client's training rows of the pool, ascending. */
function trainingRowsOf(parts: readonly Uint32Array[]): Uint32Array {
  const total = parts.reduce((sum, part) => sum + part.length, 0);
  const rows = new Uint32Array(total);
  let at = 0;
  for (const part of parts) {
    rows.set(part, at);
    at += part.length;
  }
  return rows.sort();
}

function pooledShard(scenario: Scenario, clientId: number, part: 'training' | 'test'): Shard {
  const { featureCount: p, features, targets, parts, testParts } = pooledData(scenario);
  const indices = (part === 'training' ? parts : testParts)[clientId];
  const shardFeatures = new Float64Array(indices.length * p);
  const shardTargets = new Float64Array(indices.length);
  for (let s = 0; s < indices.length; s++) {
    const source = indices[s];
    shardFeatures.set(features.subarray(source * p, source * p + p), s * p);
    shardTargets[s] = targets[source];
  }
  return {
    clientId,
    sampleCount: indices.length,
    featureCount: p,
    features: shardFeatures,
    targets: shardTargets,
  };
}

/** The rows of `shard` at `positions`, in their order. */
function shardRows(shard: Shard, positions: Uint32Array): Shard {
  const p = shard.featureCount;
  const features = new Float64Array(positions.length * p);
  const targets = new Float64Array(positions.length);
  for (let k = 0; k < positions.length; k++) {
    const s = positions[k];
    features.set(shard.features.subarray(s * p, s * p + p), k * p);
    targets[k] = shard.targets[s];
  }
  return { ...shard, sampleCount: positions.length, features, targets };
}

function directPart(
  scenario: Scenario & { data: SyntheticData },
  clientId: number,
  part: 'training' | 'test',
): Shard {
  const fraction = scenario.data.testFraction;
  // Nothing held out: no rows are drawn just to be dropped (a wide shard costs seconds).
  if (fraction === 0 && part === 'test') {
    const featureCount = scenario.data.features;
    const empty = { sampleCount: 0, features: new Float64Array(0), targets: new Float64Array(0) };
    return { clientId, featureCount, ...empty };
  }
  const rows = directRows(scenario, clientId);
  if (fraction === 0) return rows;
  const split = splitRows(dataSeedOf(scenario), clientId, rows.sampleCount, fraction);
  return shardRows(rows, part === 'training' ? split.training : split.test);
}

/** Client clientId's training shard: the same bytes in every process for the same scenario. */
export function buildShard(scenario: Scenario, clientId: number): Shard {
  checkClientId(scenario, clientId);
  return isDirect(scenario)
    ? directPart(scenario, clientId, 'training')
    : pooledShard(scenario, clientId, 'training');
}

/** Client clientId's test part (no rows when the scenario holds nothing out). */
export function buildTestShard(scenario: Scenario, clientId: number): Shard {
  checkClientId(scenario, clientId);
  return isDirect(scenario)
    ? directPart(scenario, clientId, 'test')
    : pooledShard(scenario, clientId, 'test');
}

/** Every client's test part, in client order. */
export function buildAllTestShards(scenario: Scenario): Shard[] {
  return Array.from({ length: scenario.clients.count }, (_, clientId) =>
    buildTestShard(scenario, clientId),
  );
}

/** Every client's shard, in client order. */
export function buildAllShards(scenario: Scenario): Shard[] {
  return Array.from({ length: scenario.clients.count }, (_, clientId) =>
    buildShard(scenario, clientId),
  );
}

/** n_i (training rows) for every client, without building the direct shards. */
export function sampleCountsOf(scenario: Scenario): number[] {
  if (isDirect(scenario)) {
    const fraction = scenario.data.testFraction;
    return samplesForAllClients(
      scenario.data.samplesPerClient,
      scenario.clients.count,
      dataSeedOf(scenario),
    ).map((n) => n - testRowCount(fraction, n));
  }
  return pooledData(scenario).parts.map((part) => part.length);
}
