// The memory a run would take, estimated from the scenario alone before anything is built, so
// that a scenario far beyond the machine (features 100,000 with 10,000 clients: about 760 GiB of
// shards) is refused at once with exit code 2 instead of being discovered gigabytes later. The
// estimate counts what grows with the scenario's sizes, as float64 values (8 bytes each), for
// the process that holds the whole problem (the in-process engine; the coordinator holds the
// same data, and its oracle thread a second copy):
//   data      every client's shard, n_i samples x p features plus the targets; a pooled layout
//             (labels partitioned non-iid, data sets) holds the pool beside the shards (twice)
//   kernels   the row kernels' copy of every shard's features (src/vec/wasm/kernel-arena.ts):
//             the objectives compute on it, and the shards above are held beside it only while
//             the problem is built
//   oracle    up to DENSE_DIMENSION_FASTER_MAX (src/theory/oracle.ts) the dense d x d Hessian,
//             its Cholesky factor and, for Newton's method, a shifted copy: three d x d matrices
//             at once; above it the matrix-free route, whose largest holding is a Krylov basis
//             (at most LANCZOS_BASIS_MAX vectors of d, src/linalg/spectrum.ts's iteration cap);
//             for least squares with at least as many samples as features, plus the formed
//             d x d Hessian the global objective keeps (src/problem/formed-gram.ts)
//   clients   each client's method state (measured: the method's initClient at dimension 1
//             gives its vectors per dimension) plus its compression state: per exchange, the
//             uplink's error-feedback memory (and its working copy when compressed), and the
//             downlink's replicas at both ends when the downlink is compressed
//   server    the method's server state (initServer at dimension 1, likewise)
//   messages  one exchange's downs and ups, dense, for the clients of one round
// Fixed costs (Node itself, code, a few vectors) are not counted.

import type { Scenario } from '../scenario/schema.js';
import { ScenarioError } from '../scenario/scenario-error.js';
import { methodByName } from '../algorithm/registry.js';
import type { MethodConfig } from '../algorithm/method.js';
import { samplesForAllClients } from '../data/sample-counts.js';
import { loadDataset } from '../data/datasets.js';
import { parameterDimension } from '../data/synthetic-models.js';
import { participantCount } from '../timing/participation.js';
import { stateLength } from './state-vector.js';
import { DENSE_DIMENSION_FASTER_MAX } from '../theory/oracle.js';
import { formedGramPays, formedGramValues } from '../problem/formed-gram.js';

/** Vectors a Krylov basis of the matrix-free oracle may hold (spectrum.ts's iteration cap). */
const LANCZOS_BASIS_MAX = 1000;

/**
 * The most memory a scenario may need, in MiB (4 GiB): several times any bundled scenario and
 * any laptop demonstration, and within a machine a testbed shares with other work. README.md,
 * "Limits", documents it.
 */
export const RUN_MEMORY_MIB_MAX = 4096;

const FLOAT64_BYTES = 8;
const MIB_BYTES = 1024 * 1024;

export interface MemoryEstimate {
  /** the model's dimension d */
  dim: number;
  /** by part, in bytes (see the file comment) */
  parts: {
    data: number;
    kernels: number;
    oracle: number;
    clients: number;
    server: number;
    messages: number;
  };
  totalBytes: number;
}

function dataShape(scenario: Scenario): { samples: number; features: number; pooled: boolean } {
  const data = scenario.data;
  if (data.source === 'dataset') {
    // A data set ships with a package and is small; its own size is read, not guessed.
    const dataset = loadDataset(data.name, { standardize: false });
    return { samples: dataset.sampleCount, features: dataset.featureCount, pooled: true };
  }
  const counts = samplesForAllClients(data.samplesPerClient, scenario.clients.count, scenario.seed);
  let samples = 0;
  for (const n of counts) samples += n;
  return { samples, features: data.features, pooled: data.partition.kind !== 'iid' };
}

function compresses(channel: Scenario['compression']['uplink']): boolean {
  const specs = [channel.default, ...Object.values(channel.fields)];
  return specs.some((spec) => spec.kind !== 'none' || spec.values !== 'f64');
}

/** Float64 values per model dimension in a method's client and server states. */
function stateVectorsPerDimension(scenario: Scenario): { client: number; server: number } {
  const method = methodByName(scenario.method.name);
  // Only the states' shapes matter here: any valid configuration gives the same vectors.
  const config: MethodConfig = {
    clientCount: scenario.clients.count,
    stepSize: 1,
    serverStepSize: scenario.method.serverStepSize,
    proxCoefficient: scenario.method.proxCoefficient,
    proxTolerance: scenario.method.proxTolerance,
  };
  return {
    client: stateLength(method.initClient(1, config, 0)),
    server: stateLength(method.initServer(1, config, new Float64Array(1))),
  };
}

export function estimateRunMemory(scenario: Scenario): MemoryEstimate {
  const { samples, features, pooled } = dataShape(scenario);
  const dim = parameterDimension(scenario.problem.kind, features, scenario.problem.classes);
  const clientCount = scenario.clients.count;
  const exchanges = methodByName(scenario.method.name).exchanges.length;
  const vectors = stateVectorsPerDimension(scenario);
  const uplinkVectors = exchanges * (compresses(scenario.compression.uplink) ? 2 : 1);
  const downlinkVectors = exchanges * (compresses(scenario.compression.downlink) ? 2 : 0);
  const perRound = participantCount(scenario.method.participation, clientCount);
  const values = {
    data: (pooled ? 2 : 1) * samples * (features + 1),
    oracle:
      (dim <= DENSE_DIMENSION_FASTER_MAX ? 3 * dim * dim : Math.min(dim, LANCZOS_BASIS_MAX) * dim) +
      (scenario.problem.kind === 'least-squares' && formedGramPays(samples, dim)
        ? formedGramValues(dim)
        : 0),
    clients: clientCount * (vectors.client + uplinkVectors + downlinkVectors) * dim,
    server: vectors.server * dim,
    messages: 2 * perRound * dim,
  };
  const shardBytes = samples * features * FLOAT64_BYTES;
  const parts = {
    data: values.data * FLOAT64_BYTES,
    kernels: shardBytes,
    oracle: values.oracle * FLOAT64_BYTES,
    clients: values.clients * FLOAT64_BYTES,
    server: values.server * FLOAT64_BYTES,
    messages: values.messages * FLOAT64_BYTES,
  };
  const totalBytes =
    parts.data + parts.kernels + parts.oracle + parts.clients + parts.server + parts.messages;
  return { dim, parts, totalBytes };
}

function mib(bytes: number): string {
  return (bytes / MIB_BYTES).toFixed(1);
}

/** Refuses a scenario whose estimated memory is above RUN_MEMORY_MIB_MAX (E_SCENARIO_MEMORY, exit code 2). */
export function assertMemoryFits(scenario: Scenario): void {
  const estimate = estimateRunMemory(scenario);
  if (estimate.totalBytes <= RUN_MEMORY_MIB_MAX * MIB_BYTES) return;
  const p = estimate.parts;
  throw new ScenarioError(
    'E_SCENARIO_MEMORY',
    '',
    `the run would need an estimated ${mib(estimate.totalBytes)} MiB of memory (data ${mib(p.data)}, kernel copy ${mib(p.kernels)}, oracle ${mib(p.oracle)}, client states ${mib(p.clients)}, server ${mib(p.server)}, messages ${mib(p.messages)} MiB for clients.count ${scenario.clients.count}, model dimension ${estimate.dim}), above the limit of ${RUN_MEMORY_MIB_MAX} MiB`,
  );
}
