// `roundwire coordinator <scenario> --listen HOST:PORT [--key-file F] [--tls-cert F --tls-key F]
// [--heartbeat-silence-seconds S] [--resume-grace-seconds S]`: a coordinator that waits for
// workers from other machines, until their capacity covers every client or the wait passes.
// Beyond loopback a key file is required; on loopback without one, the coordinator writes a
// fresh key file and says where (key-file.ts).

import { assertMemoryFits } from '../engine/memory-estimate.js';
import { HANDSHAKE_LIMITS } from '../protocol/index.js';
import type { Scenario } from '../scenario/schema.js';
import type { RoundRecord } from '../engine/round-record.js';
import type { Checkpoint } from '../results/checkpoint-file.js';
import { RunFiles } from './run-files.js';
import { Coordinator } from '../../server/coordinator.js';
import type { TlsFiles } from '../../server/listener.js';
import {
  metricsListeningLine,
  startMetricsServer,
  type MetricsServer,
} from '../../runtime/metrics-server.js';
import { isLoopbackHost, parseHostPort, type HostPort } from '../../runtime/address.js';
import { listenFailure } from '../../runtime/listen-error.js';
import {
  lingerWithMetrics,
  startLiveView,
  writeDistributedResults,
  RunInterrupted,
  type DistributedRunResult,
  type MetricsServing,
} from './run-distributed.js';
import {
  keyFileSource,
  KEY_FILE_ENVIRONMENT_VARIABLE,
  readKeyFile,
  writeFreshKeyFile,
  type FreshKeyFile,
} from './key-file.js';

export interface CoordinatorCommandOptions {
  listen: string;
  /** the file holding the shared key (absent: ROUNDWIRE_KEY_FILE, else a fresh one on loopback) */
  keyFile?: string;
  tlsCert?: string;
  tlsKey?: string;
  /** give up when the workers have not joined within this many seconds */
  workersWaitSeconds: number;
  workersMin: number;
  /** absent: the protocol's default (HANDSHAKE_LIMITS) */
  heartbeatSilenceSeconds?: number;
  /** absent: DEFAULT_RESUME_GRACE_SECONDS */
  resumeGraceSeconds?: number;
  /** --view: serve the live view here */
  view?: HostPort;
}

/**
 * Most --workers-wait-seconds: a week, well inside what a Node timer can count (about 24.8
 * days; a longer one fires at once).
 */
export const WORKERS_WAIT_SECONDS_MAX = 604_800;

/** Most --workers-min: each worker hosts a client at least, and a scenario has at most 10,000. */
export const WORKERS_MIN_MAX = 10_000;

/** Most --resume-grace-seconds: as long as a silent worker may hold a round (HEARTBEAT_SILENCE_SECONDS_MAX). */
export const RESUME_GRACE_SECONDS_MAX = 3600;

/**
 * Bounds of --heartbeat-silence-seconds: below a second, a garbage-collection pause or a busy
 * event loop could cost a healthy worker its clients; above an hour, a dead one holds a round
 * that long.
 */
export const HEARTBEAT_SILENCE_SECONDS_MIN = 1;
export const HEARTBEAT_SILENCE_SECONDS_MAX = 3600;

/**
 * Heartbeat timing for a silence limit: beats at the protocol default's ratio (a sixth of the
 * limit), so that a worker is lost only after missing several in a row.
 */
export function heartbeatForSilence(silenceSeconds: number): {
  intervalSeconds: number;
  silenceSeconds: number;
} {
  const ratio =
    HANDSHAKE_LIMITS.heartbeatIntervalSeconds / HANDSHAKE_LIMITS.heartbeatSilenceSeconds;
  return { intervalSeconds: silenceSeconds * ratio, silenceSeconds };
}

/** Why these options may not be used (exit code 2), or null. */
export function coordinatorOptionsProblem(
  opts: CoordinatorCommandOptions,
  env: NodeJS.ProcessEnv,
): string | null {
  const address = parseHostPort(opts.listen);
  if (address === null)
    return `--listen: expected HOST:PORT (e.g. 0.0.0.0:7070), got "${opts.listen}"`;
  if (!isLoopbackHost(address.host) && keyFileSource(opts.keyFile, env) === null) {
    return `refusing to listen on ${address.host} without a key file: anyone who can reach the port could join. Give --key-file PATH (or ${KEY_FILE_ENVIRONMENT_VARIABLE}), or listen on 127.0.0.1`;
  }
  if ((opts.tlsCert === undefined) !== (opts.tlsKey === undefined))
    return '--tls-cert and --tls-key go together';
  return null;
}

export async function runCoordinatorCommand(
  scenario: Scenario,
  opts: CoordinatorCommandOptions,
  outDir: string,
  env: NodeJS.ProcessEnv,
  io: { err: (text: string) => void; onRound?: (record: RoundRecord) => void },
  metrics: MetricsServing | null = null,
  resume: Checkpoint | null = null,
): Promise<DistributedRunResult> {
  // This process holds the problem twice (its main thread and its evaluation thread).
  assertMemoryFits(scenario, 'coordinator');
  const address = parseHostPort(opts.listen)!;
  const source = keyFileSource(opts.keyFile, env);
  // Read before anything listens, so that a bad key file ends the command at once.
  const givenKey = source === null ? null : readKeyFile(source);
  if (givenKey === null && !isLoopbackHost(address.host))
    throw new RangeError(`a fresh key file serves loopback only, not ${address.host}`);
  const fresh = givenKey === null ? writeFreshKeyFile() : null;
  const removeFresh = (): void => fresh?.remove();
  // A second Ctrl-C exits at once, past the finally below.
  process.once('exit', removeFresh);
  try {
    return await coordinate(
      scenario,
      opts,
      { key: givenKey ?? fresh!.key, fresh },
      outDir,
      io,
      metrics,
      resume,
    );
  } finally {
    removeFresh();
    process.off('exit', removeFresh);
  }
}

async function coordinate(
  scenario: Scenario,
  opts: CoordinatorCommandOptions,
  auth: { key: Uint8Array; fresh: FreshKeyFile | null },
  outDir: string,
  io: { err: (text: string) => void; onRound?: (record: RoundRecord) => void },
  metrics: MetricsServing | null,
  resume: Checkpoint | null,
): Promise<DistributedRunResult> {
  const address = parseHostPort(opts.listen)!;
  const files = new RunFiles(
    outDir,
    scenario,
    resume && { round: resume.state.round, records: resume.records },
  );
  const tls: TlsFiles | null =
    opts.tlsCert && opts.tlsKey ? { certFile: opts.tlsCert, keyFile: opts.tlsKey } : null;
  const view = await startLiveView(opts.view ?? null, auth.key, scenario, io.err);
  let coordinator: Coordinator;
  try {
    coordinator = new Coordinator(scenario, {
      host: address.host,
      port: address.port,
      key: auth.key,
      tls,
      workersMin: opts.workersMin,
      workersMax: scenario.clients.count,
      maxClientsPerWorker: scenario.clients.count,
      joinTimeoutSeconds: opts.workersWaitSeconds,
      exchangeTimeoutSeconds: 300,
      wallGraceSeconds: 0.5,
      ...(opts.heartbeatSilenceSeconds === undefined
        ? {}
        : { heartbeat: heartbeatForSilence(opts.heartbeatSilenceSeconds) }),
      ...(opts.resumeGraceSeconds === undefined
        ? {}
        : { resumeGraceSeconds: opts.resumeGraceSeconds }),
      onRound: io.onRound,
      log: (line) => io.err(`coordinator: ${line}\n`),
      checkpointEveryRounds: scenario.run.checkpointEveryRounds,
      onCheckpoint: (state) => files.keepCheckpoint(state),
      ...(resume === null ? {} : { resume: resume.state }),
      ...(view === null ? {} : { view }),
    });
  } catch (error) {
    await view?.close();
    throw error;
  }
  let interrupted: NodeJS.Signals | null = null;
  let metricsServer: MetricsServer | null = null;
  let cutLinger: () => void = () => undefined;
  const onSignal = (signal: NodeJS.Signals): void => {
    if (interrupted !== null) process.exit(130);
    interrupted = signal;
    cutLinger();
    coordinator.stop();
  };
  process.on('SIGINT', onSignal);
  process.on('SIGTERM', onSignal);
  try {
    if (metrics !== null) {
      metricsServer = await startMetricsServer(coordinator.metrics.registry, metrics.address);
      io.err(metricsListeningLine(metricsServer, metrics.address));
    }
    const url = await coordinator.listen().catch((error: unknown) => {
      throw listenFailure(error, '--listen', address);
    });
    if (auth.fresh !== null)
      io.err(
        `key file: ${auth.fresh.path} (fresh, private to you, removed when the coordinator ends; workers on this machine join with --key-file ${auth.fresh.path})\n`,
      );
    io.err(`listening on ${url}\n`);
    if (view !== null) io.err(view.listeningLine());
    const outcome = await coordinator.run(() => files.records());
    files.close();
    const summary = writeDistributedResults(outcome, outDir);
    view?.ended(summary);
    files.ended(outcome.stopReason);
    if (interrupted !== null) throw new RunInterrupted(files.resumeAdvice(interrupted));
    await lingerWithMetrics(
      metricsServer,
      metrics?.lingerSeconds ?? 0,
      io.err,
      (cut) => (cutLinger = cut),
    );
    return { outcome, summary };
  } finally {
    files.close();
    await metricsServer?.close();
    await view?.close();
    await coordinator.close();
    process.off('SIGINT', onSignal);
    process.off('SIGTERM', onSignal);
  }
}
