// The memory a run would take, estimated from the scenario alone before anything is built, so
// that a scenario far beyond the machine (features 100,000 with 10,000 clients: about 760 GiB of
// shards) is refused at once with exit code 2 instead of being discovered gigabytes later. The
// estimate counts what grows with the scenario's sizes, as float64 values (8 bytes each).
//
// One process that holds the whole problem (the in-process engine; the coordinator's main
// thread) keeps, for the whole run:
//   kernels   the row kernels' copy of every shard's features (src/vec/wasm/kernel-arena.ts),
//             which the objectives compute on; a perceptron adds its per-sample scratch beside
//             it (src/problem/perceptron.ts: PERCEPTRON_VALUES_PER_UNIT values per sample and
//             hidden or output unit, kept for the full shard)
//   clients   each client's method state (method-state-size.ts) plus its compression state: per
//             exchange, the uplink's error-feedback memory (and its working copy when
//             compressed), and the downlink's replicas at both ends when the downlink is compressed
//   server    the method's server state
//   formed    for least squares with at least as many samples as features (up to a dimension,
//             src/problem/formed-gram.ts), the d x d Hessian the global objective forms once and
//             keeps
//   messages  one exchange's downs and ups, dense, for the clients of one round
//   trajectory the predicted trajectory's ideal run (predicted-trajectory.ts): every client's
//             method state and the server's once more, where the scenario has one
// and, one after another, never together:
//   data       every client's shard, n_i samples x p features plus the targets, while the problem
//              is built (a pooled layout, labels partitioned non-iid or a data set, holds the pool
//              beside the shards: twice); the kernels' copy replaces it
//   oracle     while it solves: up to DENSE_DIMENSION_FASTER_MAX (src/theory/oracle.ts) the dense
//              d x d Hessian, its Cholesky factor and a shifted copy (three d x d); above it the
//              matrix-free route, whose largest holding is a Lanczos basis of vectors of d: for
//              least squares the global L and mu (at most its step cap, and at most the sample
//              count plus one when there are fewer samples than features, the rank of the data);
//              for logistic and softmax only `theory` runs it (the Hessian at x*), runs take L
//              from each shard's Gram matrix on the smaller of its sides
//   prediction at the run's end, the round map (predict-run.ts): a second copy of every method
//              state, the Arnoldi basis and its working vectors, PREDICTION_WORKING_VECTORS
//              vectors of the state's length in all, and, where a fixed point is solved, the GMRES
//              basis (fixed-point.ts); nothing past PREDICTION_STATE_ENTRIES_MAX, which is skipped
// A process's peak is what it keeps plus the largest of these.
//
// A distributed run holds the problem in more than one place: the coordinator's main thread as
// above, its evaluation thread (server/oracle-pool.ts) a second copy of the shards (kernels, and
// data while built), and each worker its own clients' shards, states and messages. `theory`
// computes the clients' constants on a pool whose threads rebuild the shards (a second copy).
// Fixed costs (Node itself, about 50 to 150 MiB a process, code, a few vectors) are not counted.

import { SCENARIO_LIMITS, type Scenario } from '../scenario/schema.js';
import { ScenarioError } from '../scenario/scenario-error.js';
import { dataSeedOf } from '../scenario/data-seed.js';
import { methodByName } from '../algorithm/registry.js';
import { samplesForAllClients } from '../data/sample-counts.js';
import { naturalKeysOf, scenarioDatasetShape } from '../data/dataset-pool.js';
import { fileDataShape } from '../data/file-pool.js';
import { checkNaturalClientCount, naturalGroupSizes } from '../data/partition.js';
import { parameterDimension } from '../data/synthetic-models.js';
import { participantCount } from '../timing/participation.js';
import { DEFAULT_ITERATIONS_MAX as LANCZOS_STEPS_MAX } from '../linalg/spectrum.js';
import { DENSE_DIMENSION_FASTER_MAX } from '../theory/oracle.js';
import { FIXED_POINT_DIMENSION_MAX, FIXED_POINT_KRYLOV_MAX } from '../theory/fixed-point.js';
import { stateVectorsPerDimension } from './method-state-size.js';
import { PREDICTION_STATE_ENTRIES_MAX, PREDICTION_WORKING_VECTORS } from './predict-run.js';
import { predictionBlocker } from './round-map.js';
import { linearizationBlocker } from './round-map-jacobian.js';
import { trajectoryBlocker } from './trajectory-blocker.js';
import { formedGramPays, formedGramValues } from '../problem/formed-gram.js';
import { perceptronParameterCount } from '../problem/perceptron-layout.js';
import { PERCEPTRON_VALUES_PER_UNIT } from '../problem/perceptron.js';

/**
 * The most memory a scenario may need, in MiB (4 GiB): several times any bundled scenario and
 * any laptop demonstration, and within a machine a testbed shares with other work. README.md,
 * "Limits", documents it.
 */
export const RUN_MEMORY_MIB_MAX = 4096;

const FLOAT64_BYTES = 8;
const MIB_BYTES = 1024 * 1024;
/** GMRES keeps its basis plus the state, its image, the residual and the candidate (fixed-point.ts). */
const FIXED_POINT_WORKING_VECTORS = 6;

/** Where the run's memory is: the layout a command starts. */
export type MemoryLayout =
  /** `run --in-process`, `compare`, `resume --in-process`: one process holds everything */
  | 'one-process'
  /** `theory`: one process, plus the clients' constants on a thread pool */
  | 'theory'
  /** `coordinator`: this process only; its workers run elsewhere */
  | 'coordinator'
  /** `run`, `resume`: the coordinator and run.workers local workers on this machine */
  | 'local-cluster';

export interface MemoryEstimate {
  /** the model's dimension d */
  dim: number;
  /** the whole problem in one process, by part, in bytes (see the file comment) */
  parts: {
    data: number;
    kernels: number;
    oracle: number;
    prediction: number;
    clients: number;
    server: number;
    messages: number;
    formed: number;
    trajectory: number;
  };
  /** entries of the state the prediction's round map walks (0 when no prediction is made) */
  predictionStateEntries: number;
  /** peak of one process holding the whole problem: what it keeps plus its largest passing need */
  totalBytes: number;
  /** `theory`: totalBytes plus the client-constants pool's copy of the shards when it runs one */
  theoryBytes: number;
  /** the coordinator process: totalBytes plus its evaluation thread's copy of the shards */
  coordinatorBytes: number;
  /** the worker that hosts the most samples among run.workers local workers */
  workerBytes: number;
  /** workers a local run starts */
  workerCount: number;
  /** the coordinator and every local worker */
  localClusterBytes: number;
}

export interface DataShape {
  /** n_i in client order (a data set's pool is dealt evenly) */
  samplesPerClient: number[];
  features: number;
  pooled: boolean;
}

/** A data set's or a data file's rows, features and natural keys (undefined: no natural split). */
function readDataShape(scenario: Scenario): {
  sampleCount: number;
  featureCount: number;
  keys: readonly string[] | undefined;
} {
  if (scenario.data.source === 'file') return fileDataShape(scenario);
  const dataset = scenarioDatasetShape(scenario);
  return { ...dataset, keys: naturalKeysOf(scenario, dataset) };
}

/** Every client's sample count and the feature count, from the scenario alone (nothing built). */
export function dataShape(scenario: Scenario): DataShape {
  const data = scenario.data;
  const m = scenario.clients.count;
  if (data.source === 'dataset' || data.source === 'file') {
    // A data set ships with a package and is small, and a data file is bounded in bytes; its
    // own size is read, not guessed: a natural split's groups as they are, any other split
    // dealt evenly.
    const dataset = readDataShape(scenario);
    const keys = dataset.keys;
    const share = Math.ceil(dataset.sampleCount / m);
    const groupSizes = keys === undefined ? undefined : naturalGroupSizes(keys);
    if (groupSizes !== undefined && data.partition.kind === 'natural')
      checkNaturalClientCount(groupSizes.length, m, data.partition.key);
    return {
      samplesPerClient: groupSizes ?? Array.from({ length: m }, () => share),
      features: dataset.featureCount,
      pooled: true,
    };
  }
  return {
    samplesPerClient: samplesForAllClients(data.samplesPerClient, m, dataSeedOf(scenario)),
    features: data.features,
    pooled: data.partition.kind !== 'iid',
  };
}

function compresses(channel: Scenario['compression']['uplink']): boolean {
  const specs = [channel.default, ...Object.values(channel.fields)];
  return specs.some((spec) => spec.kind !== 'none' || spec.values !== 'f64');
}

/** Lanczos vectors of d the oracle keeps while it takes L and mu of f (see the file comment). */
function oracleLanczosVectors(dim: number, samples: number): number {
  const steps = Math.min(dim, LANCZOS_STEPS_MAX);
  return samples < dim ? Math.min(steps, samples + 1) : steps;
}

/** Float64 values the prediction holds at once for a state of `entries`. */
function predictionValues(entries: number): number {
  if (entries === 0 || entries > PREDICTION_STATE_ENTRIES_MAX) return 0;
  const rate = PREDICTION_WORKING_VECTORS * entries;
  const fixedPoint =
    entries <= FIXED_POINT_DIMENSION_MAX
      ? (Math.min(entries, FIXED_POINT_KRYLOV_MAX) + FIXED_POINT_WORKING_VECTORS) * entries
      : 0;
  return rate + fixedPoint;
}

/** The sum of the `count` largest entries. */
function largestSum(values: readonly number[], count: number): number {
  return [...values]
    .sort((a, b) => b - a)
    .slice(0, count)
    .reduce((sum, n) => sum + n, 0);
}

export function estimateRunMemory(scenario: Scenario): MemoryEstimate {
  const { samplesPerClient, features, pooled } = dataShape(scenario);
  const samples = samplesPerClient.reduce((sum, n) => sum + n, 0);
  const kind = scenario.problem.kind;
  const { hiddenWidths, classes } = scenario.problem;
  const perceptronUnits =
    kind === 'perceptron' && hiddenWidths !== undefined
      ? hiddenWidths.reduce((sum, width) => sum + width, 0) + classes
      : 0;
  const dim =
    kind === 'perceptron' && hiddenWidths !== undefined
      ? perceptronParameterCount(features, hiddenWidths, classes)
      : parameterDimension(kind, features, classes);
  const clientCount = scenario.clients.count;
  const exchanges = methodByName(scenario.method.name).exchanges.length;
  const vectors = stateVectorsPerDimension(scenario);
  const uplinkVectors = exchanges * (compresses(scenario.compression.uplink) ? 2 : 1);
  const downlinkVectors = exchanges * (compresses(scenario.compression.downlink) ? 2 : 0);
  const perClientVectors = vectors.client + uplinkVectors + downlinkVectors;
  const perRound = participantCount(scenario.method.participation, clientCount);
  // Least squares gets the exact prediction, the smooth losses the local one (predict-run.ts).
  const predictionBlocked =
    kind === 'least-squares'
      ? predictionBlocker({ scenario, dim })
      : linearizationBlocker({ scenario, dim });
  const predictionStateEntries =
    predictionBlocked === null ? (vectors.server + clientCount * vectors.client) * dim : 0;
  const shardValues = (n: number) => n * (features + 1);
  const smallestSideMax = Math.max(...samplesPerClient.map((n) => Math.min(n, features)));
  const values = {
    data: (pooled ? 2 : 1) * shardValues(samples),
    kernels: samples * (features + PERCEPTRON_VALUES_PER_UNIT * perceptronUnits),
    oracle:
      dim <= DENSE_DIMENSION_FASTER_MAX
        ? 3 * dim * dim
        : kind === 'least-squares'
          ? oracleLanczosVectors(dim, samples) * dim
          : Math.min(smallestSideMax, LANCZOS_STEPS_MAX) * smallestSideMax,
    prediction: predictionValues(predictionStateEntries),
    clients: clientCount * perClientVectors * dim,
    server: vectors.server * dim,
    messages: 2 * perRound * dim,
    formed: kind === 'least-squares' && formedGramPays(samples, dim) ? formedGramValues(dim) : 0,
    trajectory:
      trajectoryBlocker(scenario, dim) === null
        ? (vectors.server + clientCount * vectors.client) * dim
        : 0,
  };
  const parts = {
    data: values.data * FLOAT64_BYTES,
    kernels: values.kernels * FLOAT64_BYTES,
    oracle: values.oracle * FLOAT64_BYTES,
    prediction: values.prediction * FLOAT64_BYTES,
    clients: values.clients * FLOAT64_BYTES,
    server: values.server * FLOAT64_BYTES,
    messages: values.messages * FLOAT64_BYTES,
    formed: values.formed * FLOAT64_BYTES,
    trajectory: values.trajectory * FLOAT64_BYTES,
  };
  const kept =
    parts.kernels + parts.formed + parts.clients + parts.server + parts.messages + parts.trajectory;
  const totalBytes = kept + Math.max(parts.data, parts.oracle, parts.prediction);

  // The Hessian at x* of logistic and softmax, by Lanczos on d, and the pool's copy of the shards
  // (least squares with fewer samples than features in every shard solves in the dual, at home).
  const theoryLanczos =
    kind === 'least-squares' || dim <= DENSE_DIMENSION_FASTER_MAX
      ? 0
      : Math.min(dim, LANCZOS_STEPS_MAX) * dim * FLOAT64_BYTES;
  const dualOnly = kind === 'least-squares' && samplesPerClient.every((n) => n < dim);
  const poolCopy = dualOnly ? 0 : parts.kernels + shardValues(samples) * FLOAT64_BYTES;
  const theoryBytes = parts.kernels + Math.max(parts.data, parts.oracle, theoryLanczos) + poolCopy;

  const shardCopy = parts.kernels + shardValues(samples) * FLOAT64_BYTES;
  const coordinatorBytes = totalBytes + shardCopy;
  const workerCount = Math.min(scenario.run.workers, clientCount);
  const hosted = Math.ceil(clientCount / workerCount);
  const hostedSamples = largestSum(samplesPerClient, hosted);
  const workerBytes =
    (hostedSamples * features + shardValues(hostedSamples)) * FLOAT64_BYTES +
    hosted * (perClientVectors + 2) * dim * FLOAT64_BYTES;
  return {
    dim,
    parts,
    predictionStateEntries,
    totalBytes,
    theoryBytes,
    coordinatorBytes,
    workerBytes,
    workerCount,
    localClusterBytes: coordinatorBytes + workerCount * workerBytes,
  };
}

function mib(bytes: number): string {
  return (bytes / MIB_BYTES).toFixed(1);
}

/** The estimate for the processes a layout starts, and what it is made of, for the refusal. */
function layoutBytes(estimate: MemoryEstimate, layout: MemoryLayout): [number, string] {
  const p = estimate.parts;
  const one = `data ${mib(p.data)}, kernel copy ${mib(p.kernels)}, formed Hessian ${mib(p.formed)}, oracle ${mib(p.oracle)}, prediction ${mib(p.prediction)}, client states ${mib(p.clients)}, server ${mib(p.server)}, messages ${mib(p.messages)}, predicted trajectory ${mib(p.trajectory)} MiB`;
  switch (layout) {
    case 'one-process':
      return [estimate.totalBytes, one];
    case 'theory':
      return [estimate.theoryBytes, `${one}; the clients' constants pool included`];
    case 'coordinator':
      return [
        estimate.coordinatorBytes,
        `${one}; its evaluation thread's copy of the shards included`,
      ];
    case 'local-cluster':
      return [
        estimate.localClusterBytes,
        `coordinator ${mib(estimate.coordinatorBytes)} MiB (${one}, and its evaluation thread's copy of the shards) and ${estimate.workerCount} local workers of up to ${mib(estimate.workerBytes)} MiB each`,
      ];
  }
}

/**
 * Refuses a scenario whose estimated memory, for the processes `layout` starts on this machine,
 * is above RUN_MEMORY_MIB_MAX (E_SCENARIO_MEMORY, exit code 2).
 */
export function assertMemoryFits(scenario: Scenario, layout: MemoryLayout = 'one-process'): void {
  const estimate = estimateRunMemory(scenario);
  // The schema holds a synthetic perceptron to the dimension limit; a data set's feature count is
  // known only here.
  if (scenario.problem.kind === 'perceptron' && estimate.dim > SCENARIO_LIMITS.dimensionMax)
    throw new ScenarioError(
      'E_SCENARIO_FIELD',
      'problem.hiddenWidths',
      `a perceptron of hidden widths [${scenario.problem.hiddenWidths?.join(', ')}] on ${scenario.data.source === 'dataset' ? `data set ${scenario.data.name}` : scenario.data.source === 'file' ? scenario.data.path : 'this data'} has ${estimate.dim} weights and biases, above the limit of ${SCENARIO_LIMITS.dimensionMax}`,
    );
  const [bytes, made] = layoutBytes(estimate, layout);
  if (bytes <= RUN_MEMORY_MIB_MAX * MIB_BYTES) return;
  throw new ScenarioError(
    'E_SCENARIO_MEMORY',
    '',
    `the run would need an estimated ${mib(bytes)} MiB of memory (${made} for clients.count ${scenario.clients.count}, model dimension ${estimate.dim}), above the limit of ${RUN_MEMORY_MIB_MAX} MiB`,
  );
}
