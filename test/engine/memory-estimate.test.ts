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
    const steady = estimate.totalBytes - estimate.parts.oracle - estimate.parts.data;
    // Common practice for an order-of-magnitude guard: a factor of 2 either way.
    expect(held).toBeGreaterThan(steady / 2);
    expect(held).toBeLessThan((steady + estimate.parts.data) * 2);
    expect(clients).toHaveLength(40);
  });
});
