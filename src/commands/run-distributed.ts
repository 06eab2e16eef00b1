// `roundwire run <scenario>`: the embedded distributed run. A coordinator on 127.0.0.1 (a port
// the OS picks, a fresh key file that the workers are pointed at) and run.workers local worker
// processes; a progress line per round; the results folder and outcome.json. No process
// outlives the run, nor does the key file: children are stopped and the file removed on
// success, on failure and on SIGINT or SIGTERM.

import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Scenario } from '../scenario/schema.js';
import type { RoundRecord } from '../engine/round-record.js';
import { resultFiles } from '../results/results-folder.js';
import type { Checkpoint } from '../results/checkpoint-file.js';
import { RunFiles } from './run-files.js';
import { assertMemoryFits } from '../engine/memory-estimate.js';
import { Coordinator, type CoordinatorOptions } from '../../server/coordinator.js';
import { LocalWorker } from '../../server/local-workers.js';
import { distributedDetails, engineOutcomeOf } from '../../server/results.js';
import type { CoordinatorOutcome } from '../../server/run-outcome.js';
import {
  lingerFor,
  metricsListeningLine,
  startMetricsServer,
  type MetricsAddress,
  type MetricsServer,
} from '../../runtime/metrics-server.js';
import { finishRun, formatRunSummary } from './run-report.js';
import { writeFreshKeyFile } from './key-file.js';
import type { RunSummary } from '../engine/run-summary.js';
import type { HostPort } from '../../runtime/address.js';
import { LiveView } from '../../server/live-view/live-view.js';

/** The run was interrupted (SIGINT, SIGTERM); the CLI exits with 130. */
export class RunInterrupted extends Error {
  readonly code = 'E_INTERRUPTED';
}

/** Limits of an embedded run: local workers start in well under a second each. */
export const EMBEDDED_LIMITS = {
  joinTimeoutSeconds: 60,
  exchangeTimeoutSeconds: 300,
  wallGraceSeconds: 0.5,
  /** after done, workers close their pools and exit; past this they are stopped */
  workerExitSeconds: 5,
  /**
   * a local worker whose coordinator died waits this long for it (a resumed run starts its own
   * workers, so an orphan only needs to outlast a blip)
   */
  workerReconnectWaitSeconds: 10,
  /**
   * a local worker is told its coordinator's URL once it listens (the wait for that line ends
   * with the run: its standard input closes), so a long join wait would only keep an orphan (its
   * run killed before the join) alive
   */
  workerCoordinatorWaitSeconds: 30,
} as const;

export interface DistributedRunIo {
  out: (text: string) => void;
  err: (text: string) => void;
  onRound?: (record: RoundRecord) => void;
}

/** --metrics and --metrics-linger: where to serve /metrics, and how long after the run. */
export interface MetricsServing {
  address: MetricsAddress;
  lingerSeconds: number;
}

/** Serves a finished run's final values for the linger time, or until `onCut` is handed a cut. */
export async function lingerWithMetrics(
  server: MetricsServer | null,
  lingerSeconds: number,
  err: (text: string) => void,
  onCut: (cut: () => void) => void,
): Promise<void> {
  if (server === null || lingerSeconds <= 0) return;
  err(
    `metrics: the run is over; serving its final values at ${server.url} for ${lingerSeconds} s\n`,
  );
  const linger = lingerFor(lingerSeconds);
  onCut(linger.cut);
  await linger.done;
}

export interface DistributedRunResult {
  outcome: CoordinatorOutcome;
  summary: RunSummary;
}

/**
 * Writes the results folder: the shared outcome.json (finishRun) with the distributed details
 * added (the true stop reason, control traffic, socket counters, workers).
 */
export function writeDistributedResults(outcome: CoordinatorOutcome, outDir: string): RunSummary {
  const summary = finishRun(engineOutcomeOf(outcome), 'distributed', outDir);
  const merged = {
    ...summary,
    seconds: { ...summary.seconds, join: outcome.joinSeconds },
    ...distributedDetails(outcome),
  };
  writeFileSync(join(outDir, resultFiles.outcome), `${JSON.stringify(merged, null, 2)}\n`);
  return merged;
}

export function coordinatorOptionsForEmbedded(
  scenario: Scenario,
  key: Uint8Array,
  workerCount: number,
  io: DistributedRunIo,
): CoordinatorOptions {
  return {
    host: '127.0.0.1',
    port: 0,
    key,
    tls: null,
    workersMin: workerCount,
    workersMax: workerCount,
    maxClientsPerWorker: Math.ceil(scenario.clients.count / workerCount),
    ...EMBEDDED_LIMITS,
    onRound: io.onRound,
    log: (line) => io.err(`coordinator: ${line}\n`),
    checkpointEveryRounds: scenario.run.checkpointEveryRounds,
  };
}

/**
 * Starts the live view (--view) of a run whose workers prove `key`; null without --view. The
 * coordinator publishes to it; the command prints its line once the coordinator is built.
 */
export function startLiveView(
  address: HostPort | null,
  key: Uint8Array,
  scenario: Scenario,
  err: (text: string) => void,
): Promise<LiveView | null> {
  if (address === null) return Promise.resolve(null);
  return LiveView.start({
    address,
    key,
    clientCount: scenario.clients.count,
    log: (line) => err(`${line}\n`),
  });
}

/** Runs the scenario with local worker processes; writes outDir; resolves to the summary. */
export async function runDistributed(
  scenario: Scenario,
  outDir: string,
  io: DistributedRunIo,
  metrics: MetricsServing | null = null,
  resume: Checkpoint | null = null,
  viewAddress: HostPort | null = null,
): Promise<DistributedRunResult> {
  // The coordinator and every local worker share this machine: all of them count.
  assertMemoryFits(scenario, 'local-cluster');
  const workerCount = Math.min(scenario.run.workers, scenario.clients.count);
  const keyFile = writeFreshKeyFile();
  const files = new RunFiles(
    outDir,
    scenario,
    resume && { round: resume.state.round, records: resume.records },
  );
  let coordinator: Coordinator;
  let view: LiveView | null = null;
  let interrupted: NodeJS.Signals | null = null;
  let runEnded = false;
  // The workers start first and are told the URL once the coordinator listens: Node's start and
  // the loading of their code overlap the coordinator's preparation (the oracle's solve).
  const workers: LocalWorker[] = [];
  const capacity = Math.ceil(scenario.clients.count / workerCount);
  for (let i = 0; i < workerCount; i++) {
    const worker = new LocalWorker({
      keyFile: keyFile.path,
      capacity,
      workerName: `local-${i + 1}`,
      coordinatorWaitSeconds: EMBEDDED_LIMITS.workerCoordinatorWaitSeconds,
      reconnectWaitSeconds: EMBEDDED_LIMITS.workerReconnectWaitSeconds,
    });
    workers.push(worker);
    void worker.exited.then((code) => {
      // A worker that dies before the run is dealt would leave the join waiting for its timeout.
      if (code !== 0 && interrupted === null && !runEnded)
        io.err(
          `worker local-${i + 1} exited with code ${code}\n${worker
            .recentStderr()
            .map((l) => `  ${l}`)
            .join('\n')}\n`,
        );
    });
  }
  try {
    view = await startLiveView(viewAddress, keyFile.key, scenario, io.err);
    coordinator = new Coordinator(scenario, {
      ...coordinatorOptionsForEmbedded(scenario, keyFile.key, workerCount, io),
      onCheckpoint: (state) => files.keepCheckpoint(state),
      ...(resume === null ? {} : { resume: resume.state }),
      ...(view === null ? {} : { view }),
    });
  } catch (error) {
    // Refused before it listens: the workers go without a word (the refusal says why).
    runEnded = true;
    await Promise.all(workers.map((w) => w.stop()));
    await view?.close();
    keyFile.remove();
    throw error;
  }
  let metricsServer: MetricsServer | null = null;
  let cutLinger: () => void = () => undefined;
  const killAll = (): void => workers.forEach((w) => w.killNow());
  // The exit hook runs when a second signal exits at once, past the finally below.
  const onExit = (): void => {
    killAll();
    keyFile.remove();
  };
  const onSignal = (signal: NodeJS.Signals): void => {
    if (interrupted !== null) {
      // A second signal: stop waiting for anything.
      killAll();
      process.exit(130);
    }
    interrupted = signal;
    cutLinger();
    // The workers stay for the round in progress and the checkpoint; done then ends them.
    io.err(`\n${signal}: stopping after the round in progress, with a checkpoint\n`);
    coordinator.stop();
  };
  process.on('SIGINT', onSignal);
  process.on('SIGTERM', onSignal);
  process.on('exit', onExit);
  try {
    if (metrics !== null) {
      metricsServer = await startMetricsServer(coordinator.metrics.registry, metrics.address);
      io.err(metricsListeningLine(metricsServer, metrics.address));
    }
    if (view !== null) io.err(view.listeningLine());
    const url = await coordinator.listen();
    workers.forEach((worker, i) => {
      worker.coordinatorAt(url);
      io.err(`started worker local-${i + 1} (pid ${worker.child.pid})\n`);
    });
    const outcome = await coordinator.run(() => files.records());
    files.close();
    runEnded = true;
    await Promise.all(workers.map((w) => w.exitsWithin(EMBEDDED_LIMITS.workerExitSeconds)));
    if (interrupted !== null) {
      view?.ended(writeDistributedResults(outcome, outDir));
      throw new RunInterrupted(files.resumeAdvice(interrupted));
    }
    const summary = writeDistributedResults(outcome, outDir);
    view?.ended(summary);
    files.ended(outcome.stopReason);
    await lingerWithMetrics(
      metricsServer,
      metrics?.lingerSeconds ?? 0,
      io.err,
      (cut) => (cutLinger = cut),
    );
    return { outcome, summary };
  } catch (error) {
    if (interrupted !== null && !(error instanceof RunInterrupted))
      throw new RunInterrupted(`interrupted by ${interrupted}`);
    throw error;
  } finally {
    runEnded = true;
    files.close();
    await metricsServer?.close();
    await view?.close();
    await coordinator.close();
    await Promise.all(workers.map((w) => w.stop()));
    keyFile.remove();
    process.off('SIGINT', onSignal);
    process.off('SIGTERM', onSignal);
    process.off('exit', onExit);
  }
}

export function formatDistributedSummary(result: DistributedRunResult, outDir: string): string {
  const { outcome, summary } = result;
  const lost =
    outcome.lostWorkers.length === 0
      ? 'none'
      : outcome.lostWorkers
          .map((w) => `${w.workerName} (round ${w.round}, clients ${w.clientIds.join(' ')})`)
          .join(', ');
  const errors =
    Object.entries({
      ...outcome.protocolErrors.received,
      ...outcome.protocolErrors.frame,
      ...outcome.protocolErrors.limit,
    })
      .map(([code, n]) => `${code} ${n}`)
      .join(', ') || 'none';
  const layers = outcome.bytesLayers;
  return `${formatRunSummary(summary, outDir)}bytes up/down: payload ${layers.payload.up}/${layers.payload.down}, encoded ${layers.encoded.up}/${layers.encoded.down}, wire ${layers.wire.up}/${layers.wire.down}\nworkers: ${outcome.workers.length}, lost: ${lost}; protocol errors: ${errors}; stop: ${outcome.stopReason}\n`;
}
