// `roundwire coordinator <scenario> --listen HOST:PORT [--token T] [--tls-cert F --tls-key F]
// [--heartbeat-silence-seconds S] [--resume-grace-seconds S]`: a coordinator that waits for workers from other machines,
// until their slots cover every client or the join limit passes. Beyond loopback a token is
// required.

import { randomBytes } from 'node:crypto';
import { isIP } from 'node:net';
import { HANDSHAKE_LIMITS } from '../protocol/index.js';
import type { Scenario } from '../scenario/schema.js';
import type { RoundRecord } from '../engine/round-record.js';
import { Coordinator } from '../../server/coordinator.js';
import type { TlsFiles } from '../../server/listener.js';
import { metricsListeningLine, startMetricsServer, type MetricsServer } from '../../server/metrics-server.js';
import { lingerWithMetrics, writeDistributedResults, RunInterrupted, type DistributedRunResult, type MetricsServing } from './run-distributed.js';
import { TOKEN_ENVIRONMENT_VARIABLE } from './worker-command.js';

export interface CoordinatorCommandOptions {
  listen: string;
  token?: string;
  tlsCert?: string;
  tlsKey?: string;
  joinTimeout: string;
  workersMin: string;
  /** absent: the protocol's default (HANDSHAKE_LIMITS) */
  heartbeatSilenceSeconds?: string;
  /** absent: DEFAULT_RESUME_GRACE_SECONDS */
  resumeGraceSeconds?: string;
}

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
export function heartbeatForSilence(silenceSeconds: number): { intervalSeconds: number; silenceSeconds: number } {
  const ratio = HANDSHAKE_LIMITS.heartbeatIntervalSeconds / HANDSHAKE_LIMITS.heartbeatSilenceSeconds;
  return { intervalSeconds: silenceSeconds * ratio, silenceSeconds };
}

export interface ListenAddress {
  host: string;
  port: number;
}

/** HOST:PORT or [IPv6]:PORT; null when malformed. */
export function parseListenAddress(text: string): ListenAddress | null {
  const match = /^(?:\[([^\]]+)\]|([^:]+)):(\d{1,5})$/.exec(text);
  if (match === null) return null;
  const port = Number(match[3]);
  if (port > 65535) return null;
  return { host: match[1] ?? match[2], port };
}

export function isLoopback(host: string): boolean {
  if (host === 'localhost' || host === '::1') return true;
  return isIP(host) === 4 && host.startsWith('127.');
}

/** Why these options may not be used (exit code 2), or null. */
export function coordinatorOptionsProblem(opts: CoordinatorCommandOptions, env: NodeJS.ProcessEnv): string | null {
  const address = parseListenAddress(opts.listen);
  if (address === null) return `--listen: expected HOST:PORT (e.g. 0.0.0.0:7070), got "${opts.listen}"`;
  const token = opts.token ?? env[TOKEN_ENVIRONMENT_VARIABLE];
  if (!isLoopback(address.host) && (token === undefined || token === '')) {
    return `refusing to listen on ${address.host} without a token: anyone who can reach the port could join. Give --token T (or ${TOKEN_ENVIRONMENT_VARIABLE}), or listen on 127.0.0.1`;
  }
  if ((opts.tlsCert === undefined) !== (opts.tlsKey === undefined)) return '--tls-cert and --tls-key go together';
  const seconds = Number(opts.joinTimeout);
  if (!(seconds > 0) || !Number.isFinite(seconds)) return `--join-timeout: expected positive seconds, got "${opts.joinTimeout}"`;
  const workersMin = Number(opts.workersMin);
  if (!Number.isInteger(workersMin) || workersMin < 1) return `--workers-min: expected a positive integer, got "${opts.workersMin}"`;
  if (opts.heartbeatSilenceSeconds !== undefined) {
    const silence = Number(opts.heartbeatSilenceSeconds);
    if (opts.heartbeatSilenceSeconds.trim() === '' || !(silence >= HEARTBEAT_SILENCE_SECONDS_MIN && silence <= HEARTBEAT_SILENCE_SECONDS_MAX)) {
      return `--heartbeat-silence-seconds: expected seconds from ${HEARTBEAT_SILENCE_SECONDS_MIN} to ${HEARTBEAT_SILENCE_SECONDS_MAX}, got "${opts.heartbeatSilenceSeconds}"`;
    }
  }
  if (opts.resumeGraceSeconds !== undefined) {
    const grace = Number(opts.resumeGraceSeconds);
    if (opts.resumeGraceSeconds.trim() === '' || !(grace >= 0 && grace <= RESUME_GRACE_SECONDS_MAX)) {
      return `--resume-grace-seconds: expected seconds from 0 to ${RESUME_GRACE_SECONDS_MAX}, got "${opts.resumeGraceSeconds}"`;
    }
  }
  return null;
}

export async function runCoordinatorCommand(
  scenario: Scenario,
  opts: CoordinatorCommandOptions,
  outDir: string,
  env: NodeJS.ProcessEnv,
  io: { err: (text: string) => void; onRound?: (record: RoundRecord) => void },
  metrics: MetricsServing | null = null,
): Promise<DistributedRunResult> {
  const address = parseListenAddress(opts.listen)!;
  const given = opts.token ?? env[TOKEN_ENVIRONMENT_VARIABLE];
  const token = given === undefined || given === '' ? randomBytes(24).toString('hex') : given;
  const tls: TlsFiles | null = opts.tlsCert && opts.tlsKey ? { certFile: opts.tlsCert, keyFile: opts.tlsKey } : null;
  const coordinator = new Coordinator(scenario, {
    host: address.host,
    port: address.port,
    token,
    tls,
    workersMin: Number(opts.workersMin),
    workersMax: scenario.clients.count,
    maxClientsPerWorker: scenario.clients.count,
    joinTimeoutSeconds: Number(opts.joinTimeout),
    handshakeTimeoutSeconds: 10,
    exchangeTimeoutSeconds: 300,
    wallGraceSeconds: 0.5,
    ...(opts.heartbeatSilenceSeconds === undefined ? {} : { heartbeat: heartbeatForSilence(Number(opts.heartbeatSilenceSeconds)) }),
    ...(opts.resumeGraceSeconds === undefined ? {} : { resumeGraceSeconds: Number(opts.resumeGraceSeconds) }),
    onRound: io.onRound,
    log: (line) => io.err(`coordinator: ${line}\n`),
  });
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
    const url = await coordinator.listen();
    io.err(`listening on ${url}\n`);
    if (given === undefined || given === '') io.err(`token (loopback only): ${token}\n`);
    const outcome = await coordinator.run();
    const summary = writeDistributedResults(outcome, outDir);
    if (interrupted !== null) throw new RunInterrupted(`interrupted by ${interrupted}; partial results in ${outDir}`);
    await lingerWithMetrics(metricsServer, metrics?.lingerSeconds ?? 0, io.err, (cut) => (cutLinger = cut));
    return { outcome, summary };
  } finally {
    await metricsServer?.close();
    await coordinator.close();
    process.off('SIGINT', onSignal);
    process.off('SIGTERM', onSignal);
  }
}
