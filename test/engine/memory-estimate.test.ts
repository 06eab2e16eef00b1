// The memory estimate at load (src/engine/memory-estimate.ts): a scenario far beyond the limit is
// refused before anything is allocated, a normal one is accepted, and the estimate is checked
// against the memory a real run's objects take.
import { kernelRegionBytesAllocated } from '../../src/vec/wasm/kernel-arena.js';
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { ScenarioError } from '../../src/scenario/scenario-error.js';
import {
  assertMemoryFits,
  estimateRunMemory,
  RUN_MEMORY_MIB_MAX,
} from '../../src/engine/memory-estimate.js';
import { planFor } from '../../src/engine/in-process-engine.js';
import { ClientRuntime } from '../../src/engine/client-runtime.js';
import { ServerRuntime } from '../../src/engine/server-runtime.js';
import { DirectTransport } from '../../src/engine/direct-transport.js';
import { walkRound, walkSetup } from '../../src/engine/round-walk.js';
import { driveSync } from '../../src/engine/walk-transport.js';
import { codeOf } from '../support/error-code.js';
import { DEFAULT_ITERATIONS_MAX as LANCZOS_STEPS_MAX } from '../../src/linalg/spectrum.js';
import {
  PREDICTION_STATE_ENTRIES_MAX,
  PREDICTION_WORKING_VECTORS,
} from '../../src/engine/predict-run.js';
import { stateVectorsPerDimension } from '../../src/engine/method-state-size.js';
import { runCli } from '../cli/run-cli.js';

/** V8's collector, so that the measurement counts live memory, not garbage (Node's own docs for v8.setFlagsFromString). */
setFlagsFromString('--expose-gc');
const collectGarbage = runInNewContext('gc') as () => void;

const quickstart = readFileSync('scenarios/quickstart.yaml', 'utf8');

/** The schema's largest features (100,000) with its largest client count (10,000). */
const huge = scenarioFromText(quickstart, 'quickstart.yaml', [
  'data.features:100000',
  'clients.count:10000',
]);

describe('memory estimate at load', () => {
  it('refuses features 100000 with 10000 clients at once, naming the estimate and the limit in MiB', () => {
    expect(codeOf(() => assertMemoryFits(huge), ScenarioError)).toBe('E_SCENARIO_MEMORY');
    // Shards alone: 10,000 clients x n_i samples x (100,000 features + a target) x 8 bytes.
    const estimate = estimateRunMemory(huge);
    expect(estimate.parts.data).toBeGreaterThan(10_000 * 100_001 * 8);
    // The message is one line with the estimate and the limit, both in MiB.
    expect(() => planFor(huge)).toThrow(
      new RegExp(
        `^the run would need an estimated ${(estimate.totalBytes / 2 ** 20).toFixed(1)} MiB of memory .*above the limit of ${RUN_MEMORY_MIB_MAX} MiB$`,
      ),
    );
  }, 5_000);

  it('the command line refuses it with exit code 2 and one line, before any run starts', async () => {
    const r = await runCli(
      [
        'run',
        'scenarios/quickstart.yaml',
        '--in-process',
        '--tweak',
        'data.features:100000',
        '--tweak',
        'clients.count:10000',
      ],
      // Node's start and the scenario's load take the time here; nothing is allocated.
      20_000,
    );
    expect(r.code, r.stderr).toBe(2);
    const lines = r.stderr.trimEnd().split('\n');
    expect(lines, r.stderr).toHaveLength(1);
    expect(lines[0]).toMatch(/estimated \d+\.\d MiB .* limit of 4096 MiB$/);
  }, 25_000);

  it('accepts the bundled quickstart, far below the limit', () => {
    const scenario = scenarioFromText(quickstart, 'quickstart.yaml');
    expect(() => assertMemoryFits(scenario)).not.toThrow();
    expect(estimateRunMemory(scenario).totalBytes).toBeLessThan(RUN_MEMORY_MIB_MAX * 2 ** 20);
  });

  it('is within a factor of 2 of the memory a run holds after its first round', () => {
    // SCAFFOLD (client control variates) with top-k uplinks and downlinks (error-feedback
    // memories and replicas) on 40 clients of 150 samples and 200 features: the shards (about
    // 10 MB) dominate, as they do in any large scenario. The oracle's matrices live only while it
    // solves, and the shards only until the objectives have copied them into kernel memory, so
    // the memory held after a round (array buffers plus kernel regions, which Node does not count
    // among array buffers) is compared with the estimate less those two parts.
    const scenario = scenarioFromText(quickstart, 'quickstart.yaml', [
      'seed:4242',
      'data.features:200',
      'data.samplesPerClient:150',
      'clients.count:40',
      'method.name:scaffold',
      'compression.uplink.default:{kind: top-k, fraction: 0.1}',
      'compression.downlink.default:{kind: top-k, fraction: 0.1}',
    ]);
    const estimate = estimateRunMemory(scenario);
    collectGarbage();
    const before = process.memoryUsage().arrayBuffers + kernelRegionBytesAllocated();
    const { plan, theory } = planFor(scenario);
    const server = new ServerRuntime(plan);
    const clients = theory.instance.objectives.map((o, id) => new ClientRuntime(plan, id, o));
    driveSync(walkRound(walkSetup(plan, server), 1), new DirectTransport(clients));
    collectGarbage();
    const held = process.memoryUsage().arrayBuffers + kernelRegionBytesAllocated() - before;
    // Whether the shards are collected by now depends on the engine's collector: the held memory
    // lies between the estimate's steady part and that part plus the shards.
    const p = estimate.parts;
    const steady = p.kernels + p.clients + p.server + p.messages;
    // Common practice for an order-of-magnitude guard: a factor of 2 either way.
    expect(held).toBeGreaterThan(steady / 2);
    expect(held).toBeLessThan((steady + p.data) * 2);
    expect(clients).toHaveLength(40);
  });
});

describe('memory estimate at d = 20,000 (scenarios/wide-least-squares.yaml)', () => {
  // The scenario's own sizes (invented demo numbers): 8 clients x 500 samples, 20,000 features,
  // FedAvg, 2 local workers. Each part follows the file comment of memory-estimate.ts.
  const wide = scenarioFromText(
    readFileSync('scenarios/wide-least-squares.yaml', 'utf8'),
    'wide-least-squares.yaml',
  );
  const estimate = estimateRunMemory(wide);
  const d = 20_000;
  const samples = 8 * 500;
  const mib = 2 ** 20;

  it('counts X and its kernel copy, one Lanczos basis of the rank plus one, and the prediction', () => {
    const p = estimate.parts;
    expect(estimate.dim).toBe(d);
    expect(p.data).toBe(samples * (d + 1) * 8);
    expect(p.kernels).toBe(samples * d * 8);
    // Fewer samples than features: Lanczos on the data's Hessian ends within rank + 1 steps,
    // capped by its step limit (1000 here, below 4001).
    expect(p.oracle).toBe(Math.min(samples + 1, LANCZOS_STEPS_MAX) * d * 8);
    // No d x d matrix anywhere: the oracle's part is far below one (3.2 GB at d = 20,000).
    expect(p.oracle).toBeLessThan(d * d * 8);
    const vectors = stateVectorsPerDimension(wide);
    const entries = (vectors.server + 8 * vectors.client) * d;
    expect(estimate.predictionStateEntries).toBe(entries);
    expect(entries).toBeLessThanOrEqual(PREDICTION_STATE_ENTRIES_MAX);
    expect(p.prediction).toBe(PREDICTION_WORKING_VECTORS * entries * 8);
  });

  it('fits one process and the local cluster (coordinator and 2 workers) within the limit', () => {
    expect(estimate.workerCount).toBe(2);
    // A worker hosts 4 clients: their shards while built, the kernel copy, states and messages.
    expect(estimate.workerBytes).toBeGreaterThan(4 * 500 * (2 * d + 1) * 8);
    expect(estimate.coordinatorBytes).toBeGreaterThan(estimate.totalBytes);
    expect(estimate.localClusterBytes).toBe(estimate.coordinatorBytes + 2 * estimate.workerBytes);
    expect(estimate.localClusterBytes).toBeLessThan(RUN_MEMORY_MIB_MAX * mib);
    for (const layout of ['one-process', 'theory', 'coordinator', 'local-cluster'] as const)
      expect(() => assertMemoryFits(wide, layout)).not.toThrow();
  });

  it('refuses twice the samples on the local cluster, though one process would hold them', () => {
    const doubled = scenarioFromText(
      readFileSync('scenarios/wide-least-squares.yaml', 'utf8'),
      'wide-least-squares.yaml',
      ['data.samplesPerClient:1000'],
    );
    expect(() => assertMemoryFits(doubled, 'one-process')).not.toThrow();
    expect(codeOf(() => assertMemoryFits(doubled, 'local-cluster'), ScenarioError)).toBe(
      'E_SCENARIO_MEMORY',
    );
    expect(() => assertMemoryFits(doubled, 'local-cluster')).toThrow(
      /^the run would need an estimated \d+\.\d MiB of memory \(coordinator .* and 2 local workers of up to \d+\.\d MiB each for clients.count 8, model dimension 20000\), above the limit of 4096 MiB$/,
    );
  });
});
