// `roundwire coordinator <scenario> --listen HOST:PORT [--token T] [--tls-cert F --tls-key F]`:
// a coordinator that waits for workers from other machines, until their slots cover every
// client or the join limit passes. Beyond loopback a token is required.

import { randomBytes } from 'node:crypto';
import { isIP } from 'node:net';
import type { Scenario } from '../scenario/schema.js';
import type { RoundRecord } from '../engine/round-record.js';
import { Coordinator } from '../../server/coordinator.js';
import type { TlsFiles } from '../../server/listener.js';
import { writeDistributedResults, RunInterrupted, type DistributedRunResult } from './run-distributed.js';
import { TOKEN_ENVIRONMENT_VARIABLE } from './worker-command.js';

export interface CoordinatorCommandOptions {
  listen: string;
  token?: string;
  tlsCert?: string;
  tlsKey?: string;
  joinTimeout: string;
  workersMin: string;
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
  return null;
}

export async function runCoordinatorCommand(
  scenario: Scenario,
  opts: CoordinatorCommandOptions,
  outDir: string,
  env: NodeJS.ProcessEnv,
  io: { err: (text: string) => void; onRound?: (record: RoundRecord) => void },
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
    onRound: io.onRound,
    log: (line) => io.err(`coordinator: ${line}\n`),
  });
  let interrupted: NodeJS.Signals | null = null;
  const onSignal = (signal: NodeJS.Signals): void => {
    if (interrupted !== null) process.exit(130);
    interrupted = signal;
    coordinator.stop();
  };
  process.on('SIGINT', onSignal);
  process.on('SIGTERM', onSignal);
  try {
    const url = await coordinator.listen();
    io.err(`listening on ${url}\n`);
    if (given === undefined || given === '') io.err(`token (loopback only): ${token}\n`);
    const outcome = await coordinator.run();
    const summary = writeDistributedResults(outcome, outDir);
    if (interrupted !== null) throw new RunInterrupted(`interrupted by ${interrupted}; partial results in ${outDir}`);
    return { outcome, summary };
  } finally {
    await coordinator.close();
    process.off('SIGINT', onSignal);
    process.off('SIGTERM', onSignal);
  }
}
