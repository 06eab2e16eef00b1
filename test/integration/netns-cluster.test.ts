// A coordinator and workers on separate network stacks (netns-cluster.ts), started with the
// command lines of the Kubernetes manifests: what crosses a real network, not one loopback.
// - virtual clock: the model is the in-process engine's, bit for bit, and so are the records;
// - wall clock, one worker's uplink shaped by tc tbf to a rate R: its measured transfer seconds
//   are its frames' wire bytes / R, and it is the round's straggler;
// - a link that goes down mid-round and comes back is ridden out; one down past the
//   coordinator's silence limit loses its worker, and the run completes with it recorded.
// Needs root (CAP_NET_ADMIN) for ip netns and tc; skips, saying why, only where the kernel
// refuses a namespace.

import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { ClientRoundRecord, RoundRecord } from '../../src/engine/round-record.js';
import { resultFiles } from '../../src/results/results-folder.js';
import { readJsonLines } from './cli-process.js';
import { NetnsCluster, namespacesRefused } from './netns-cluster.js';
import { expectRecordsOfCleanRun } from './hostile-connections.js';

const refusal = namespacesRefused();
if (refusal !== null) console.warn(`netns-cluster tests skipped: ${refusal}`);

/**
 * Runs the cluster to its end: starts coordinator and workers, waits for the coordinator's exit;
 * `whileRunning` is awaited meanwhile.
 */
async function runToEnd(
  cluster: NetnsCluster,
  timeoutMs: number,
  whileRunning: () => Promise<void> = async () => undefined,
): Promise<string> {
  const coordinator = cluster.startCoordinator();
  cluster.startWorkers();
  await whileRunning();
  const exit = await coordinator.exit(timeoutMs);
  expect(exit, coordinator.stderr).toEqual({ code: 0, signal: null });
  const folder = cluster.resultsFolder();
  expect(folder).not.toBeNull();
  return folder!;
}

describe.skipIf(refusal !== null)('coordinator and 3 workers in network namespaces', () => {
  describe('virtual clock', () => {
    let cluster: NetnsCluster;
    let folder: string;

    beforeAll(async () => {
      // Each client on a link of its own (a list), so that the modelled times differ by client.
      cluster = new NetnsCluster({
        workers: 3,
        scenarioYaml: `
name: netns-virtual
seed: 11
problem: {kind: least-squares, regularization: 0.01}
data: {source: synthetic, features: 12, samplesPerClient: 40, minimizerSpread: 1.0}
clients: {count: 6}
method: {name: fedavg, localSteps: 3, stepSize: auto}
timing:
  clock: virtual
  links: {uplinkBytesPerSecond: [1000, 2000, 4000, 8000, 16000, 32000], latencySeconds: 0.01}
run: {rounds: 6, workers: 3, checkpointEveryRounds: 0}
`,
      });
      folder = await runToEnd(cluster, 45_000);
    }, 60_000);
    afterAll(() => cluster?.destroy());

    it('ends on the in-process model bit for bit, with the same records and modelled times', () => {
      expectRecordsOfCleanRun(folder);
      const rounds = readJsonLines<RoundRecord>(join(folder, resultFiles.rounds));
      const clients = readJsonLines<ClientRoundRecord>(join(folder, resultFiles.clients));
      // The run crossed the links: 6 rounds, every client's bytes on the wire, and the slowest
      // uplink (client 0, 1000 bytes per second) the longest transfer of every round.
      expect(rounds.at(-1)!.round).toBe(6);
      for (const c of clients) expect(c.bytes.wire!.up).toBeGreaterThan(0);
      for (let r = 1; r <= 6; r++) {
        const inRound = clients.filter((c) => c.round === r);
        const slowest = Math.max(...inRound.map((c) => c.transferSeconds));
        expect(inRound.find((c) => c.clientId === 0)!.transferSeconds).toBe(slowest);
      }
      const outcome = JSON.parse(readFileSync(join(folder, resultFiles.outcome), 'utf8')) as {
        distributed: { workers: unknown[] };
      };
      expect(outcome.distributed.workers).toHaveLength(3);
    });
  });

  describe('wall clock, one uplink shaped by a token bucket', () => {
    /** R: 128,000 bytes per second; a dense upload of d = 8,000 float64 values takes about 0.5 s */
    const rateBytesPerSecond = 128_000;
    /** the shaped worker's index */
    const shapedWorker = 1;
    /** the client it hosts (one a worker; the order of joining decides which) */
    let shaped = -1;
    let cluster: NetnsCluster;
    let clients: ClientRoundRecord[];
    let rounds: RoundRecord[];

    beforeAll(async () => {
      cluster = new NetnsCluster({
        workers: 3,
        scenarioYaml: `
name: netns-wall
seed: 5
problem: {kind: least-squares, regularization: 0.01}
data: {source: synthetic, features: 8000, samplesPerClient: 10}
clients: {count: 3}
method: {name: fedavg, localSteps: 2, stepSize: 0.001}
timing: {clock: wall, stepCostSeconds: 0.001}
run: {rounds: 3, workers: 3, checkpointEveryRounds: 0}
`,
      });
      // The smallest burst a 1500-byte MTU allows (one full frame and its Ethernet header).
      cluster.shapeUplink(shapedWorker, rateBytesPerSecond, 1600);
      const folder = await runToEnd(cluster, 60_000, async () => {
        [shaped] = await cluster.hostedClients(shapedWorker, 30_000);
      });
      clients = readJsonLines<ClientRoundRecord>(join(folder, resultFiles.clients));
      rounds = readJsonLines<RoundRecord>(join(folder, resultFiles.rounds));
    }, 75_000);
    afterAll(() => cluster?.destroy());

    it("measures the shaped worker's transfer as its wire bytes / R, within 15%", () => {
      const ups = clients.filter((c) => c.clientId === shaped);
      expect(ups).toHaveLength(3);
      for (const c of ups) {
        const expected = c.bytes.wire!.up / rateBytesPerSecond;
        expect(c.upStreamSeconds).toBeDefined();
        expect(Math.abs(c.upStreamSeconds! - expected) / expected).toBeLessThan(0.15);
      }
    });

    it('shows the shaped worker as the straggler of every round', () => {
      for (const r of [1, 2, 3]) {
        const inRound = clients.filter((c) => c.round === r);
        const slow = inRound.find((c) => c.clientId === shaped)!;
        for (const other of inRound.filter((c) => c.clientId !== shaped)) {
          // The others' frames cross an unshaped link far faster, and they wait for the shaped
          // one: at least half its transfer time.
          expect(other.upStreamSeconds!).toBeLessThan(slow.upStreamSeconds! / 4);
          expect(other.waitSeconds).toBeGreaterThan(slow.waitSeconds);
          expect(other.waitSeconds).toBeGreaterThan(slow.upStreamSeconds! / 2);
        }
        const previous = rounds.find((x) => x.round === r - 1)!;
        const current = rounds.find((x) => x.round === r)!;
        expect(current.wallSeconds - previous.wallSeconds).toBeGreaterThan(slow.upStreamSeconds!);
      }
    });
  });

  describe('wall clock, links going down mid-run', () => {
    /** worker 0's link goes down for a moment: far below the silence limit */
    const briefWorker = 0;
    /** worker 2's link stays down past the coordinator's silence limit */
    const cutWorker = 2;
    /** the clients they host */
    let brief = -1;
    let cut = -1;
    const silenceSeconds = 6;
    let cluster: NetnsCluster;
    let folder: string;
    const outageMs = 1500;

    beforeAll(async () => {
      cluster = new NetnsCluster({
        workers: 3,
        scenarioYaml: `
name: netns-links-down
seed: 3
problem: {kind: least-squares, regularization: 0.01}
data: {source: synthetic, features: 10, samplesPerClient: 20}
clients: {count: 3}
method: {name: fedavg, localSteps: 4, stepSize: auto}
timing: {clock: wall, stepCostSeconds: 0.1}
run: {rounds: 6, workers: 3, checkpointEveryRounds: 0}
`,
        // The manifests keep the default of 30 s; a test cannot wait that long. The worker's
        // heartbeats come every 5 s, so the limit must exceed that.
        extraCoordinatorArgs: ['--heartbeat-silence-seconds', String(silenceSeconds)],
      });
      const coordinator = cluster.startCoordinator();
      cluster.startWorkers();
      [brief] = await cluster.hostedClients(briefWorker, 30_000);
      [cut] = await cluster.hostedClients(cutWorker, 30_000);
      // Once round 2 is recorded, round 3's downs are out and its clients at work (0.4 s): the
      // brief outage falls in round 3, the cut in round 5, so that each round shows one.
      await waitFor(() => roundsRecorded(cluster) >= 2, 40_000);
      await sleepMs(100);
      cluster.setLink(briefWorker, false);
      await sleepMs(outageMs);
      cluster.setLink(briefWorker, true);
      await waitFor(() => roundsRecorded(cluster) >= 4, 30_000);
      await sleepMs(100);
      cluster.setLink(cutWorker, false);
      await coordinator.waitForStderr(/lost in round/, (silenceSeconds + 10) * 1000);
      cluster.setLink(cutWorker, true);
      const exit = await coordinator.exit(30_000);
      expect(exit, coordinator.stderr).toEqual({ code: 0, signal: null });
      folder = cluster.resultsFolder()!;
    }, 75_000);
    afterAll(() => cluster?.destroy());

    it('rides out a brief outage: every update of that worker counts, the stalled round shows it', () => {
      const clients = readJsonLines<ClientRoundRecord>(join(folder, resultFiles.clients));
      const own = clients.filter((c) => c.clientId === brief);
      expect(own.map((c) => c.round)).toEqual([1, 2, 3, 4, 5, 6]);
      expect(own.every((c) => !c.dropped)).toBe(true);
      const rounds = readJsonLines<RoundRecord>(join(folder, resultFiles.rounds));
      // Round 3 waited out the outage: its up could not leave before the link came back.
      expect(rounds[3].wallSeconds - rounds[2].wallSeconds).toBeGreaterThan(outageMs / 1000);
    });

    it('loses the worker whose link stays down, and completes the run with it recorded', () => {
      const outcome = JSON.parse(readFileSync(join(folder, resultFiles.outcome), 'utf8')) as {
        stopReason: string;
        rounds: number;
        lostWorkers: string[];
      };
      expect(outcome.stopReason).toBe('rounds-complete');
      expect(outcome.rounds).toBe(6);
      expect(outcome.lostWorkers).toHaveLength(1);
      const rounds = readJsonLines<RoundRecord>(join(folder, resultFiles.rounds));
      // Its client's update of round 5 never came; it took part in no round after.
      expect(rounds[5].dropped).toContain(cut);
      expect(Object.keys(rounds[6].localSteps)).not.toContain(String(cut));
      for (const r of rounds.slice(1, 5)) expect(Object.keys(r.localSteps)).toContain(String(cut));
    });
  });
});

function roundsRecorded(cluster: NetnsCluster): number {
  const folder = cluster.resultsFolder();
  if (folder === null || !existsSync(join(folder, resultFiles.rounds))) return -1;
  const lines = readFileSync(join(folder, resultFiles.rounds), 'utf8').split('\n');
  return lines.filter((l) => l.length > 0).length - 1;
}

function sleepMs(ms: number): Promise<void> {
  return new Promise((resolve) => setTimeout(resolve, ms));
}

async function waitFor(condition: () => boolean, timeoutMs: number): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (!condition()) {
    if (Date.now() > deadline) throw new Error(`not met within ${timeoutMs} ms`);
    await sleepMs(50);
  }
}
