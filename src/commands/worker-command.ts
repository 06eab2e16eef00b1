// `roundwire worker --join URL --token T --slots N [--name NAME] [--ca FILE]`: a worker process.
// The token may come from ROUNDWIRE_TOKEN instead, so that it does not show in ps. --ca names
// PEM certificates to trust for a wss:// coordinator beside the system's (a self-signed one).

import { readFileSync } from 'node:fs';
import { hostname } from 'node:os';
import { Worker, type WorkerExit } from '../../client/worker.js';
import { WorkerMetrics } from '../../client/metrics.js';
import { lingerFor, metricsListeningLine, startMetricsServer, type MetricsAddress, type MetricsServer } from '../../server/metrics-server.js';

export interface WorkerCommandOptions {
  join: string;
  token?: string;
  slots: string;
  name?: string;
  /** serve the worker's metrics at http://HOST:PORT/metrics */
  metrics?: MetricsAddress;
  /** after the coordinator says done, keep serving metrics this long */
  metricsLinger: number;
  /** PEM certificates to trust for a wss:// coordinator, beside the system's */
  ca?: string;
}

/** A CA file far larger than any certificate bundle is a wrong path, not certificates. */
export const CA_FILE_BYTES_MAX = 1024 * 1024;

/** The certificates of a --ca file (PEM text), or why it cannot serve. */
export function readTrustedCertificates(file: string): { pem: string } | { problem: string } {
  let text: string;
  try {
    const bytes = readFileSync(file);
    if (bytes.byteLength > CA_FILE_BYTES_MAX) return { problem: `--ca: ${file} is larger than ${CA_FILE_BYTES_MAX} bytes; expected PEM certificates` };
    text = bytes.toString('utf8');
  } catch (error) {
    return { problem: `--ca: cannot read ${file} (${(error as Error).message})` };
  }
  if (!text.includes('-----BEGIN CERTIFICATE-----')) return { problem: `--ca: ${file} holds no PEM certificate (-----BEGIN CERTIFICATE-----)` };
  return { pem: text };
}

/** Environment variable a worker reads its token from when --token is absent. */
export const TOKEN_ENVIRONMENT_VARIABLE = 'ROUNDWIRE_TOKEN';

/** Most clients one worker offers to host; the scenario schema allows 10,000 clients in all. */
export const WORKER_SLOTS_MAX = 10_000;

/** Returns a problem with the options, or null when they are usable. */
export function workerOptionsProblem(opts: WorkerCommandOptions, env: NodeJS.ProcessEnv): string | null {
  if (!/^wss?:\/\//.test(opts.join)) return `--join: expected ws://HOST:PORT or wss://HOST:PORT, got "${opts.join}"`;
  const slots = Number(opts.slots);
  if (!Number.isInteger(slots) || slots < 1 || slots > WORKER_SLOTS_MAX) return `--slots: expected an integer from 1 to ${WORKER_SLOTS_MAX}, got "${opts.slots}"`;
  const token = opts.token ?? env[TOKEN_ENVIRONMENT_VARIABLE];
  if (token === undefined || token === '') return `a token is needed: --token T or the ${TOKEN_ENVIRONMENT_VARIABLE} environment variable`;
  if (opts.ca !== undefined) {
    if (!opts.join.startsWith('wss://')) return `--ca is for a wss:// coordinator; --join is "${opts.join}"`;
    const certificates = readTrustedCertificates(opts.ca);
    if ('problem' in certificates) return certificates.problem;
  }
  return null;
}

export async function runWorkerCommand(opts: WorkerCommandOptions, env: NodeJS.ProcessEnv, err: (text: string) => void): Promise<WorkerExit> {
  const workerName = opts.name ?? `${hostname()}-${process.pid}`;
  const metrics = opts.metrics === undefined ? null : new WorkerMetrics();
  let metricsServer: MetricsServer | null = null;
  if (metrics !== null && opts.metrics !== undefined) {
    metricsServer = await startMetricsServer(metrics.registry, opts.metrics);
    err(`worker ${workerName}: ${metricsListeningLine(metricsServer, opts.metrics)}`);
  }
  const certificates = opts.ca === undefined ? null : readTrustedCertificates(opts.ca);
  const worker = new Worker({
    url: opts.join,
    token: (opts.token ?? env[TOKEN_ENVIRONMENT_VARIABLE]) as string,
    slots: Number(opts.slots),
    workerName,
    threadsMax: Number(opts.slots),
    ...(metrics === null ? {} : { metrics }),
    ...(certificates !== null && 'pem' in certificates ? { trustedCertificatesPem: certificates.pem } : {}),
    log: (line) => err(`worker ${workerName}: ${line}\n`),
  });
  let cutLinger: () => void = () => undefined;
  const onSignal = (): void => {
    cutLinger();
    void worker.stop().then(() => process.exit(130));
  };
  process.once('SIGINT', onSignal);
  process.once('SIGTERM', onSignal);
  try {
    const exit = await worker.run();
    if (metricsServer !== null && opts.metricsLinger > 0) {
      err(`worker ${workerName}: metrics: the run is over; serving final values at ${metricsServer.url} for ${opts.metricsLinger} s\n`);
      const linger = lingerFor(opts.metricsLinger);
      cutLinger = linger.cut;
      await linger.done;
    }
    return exit;
  } finally {
    process.off('SIGINT', onSignal);
    process.off('SIGTERM', onSignal);
    await metricsServer?.close();
  }
}
