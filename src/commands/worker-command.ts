// `roundwire worker ws://HOST:PORT [--key-file F] [--capacity N] [--name NAME] [--ca FILE]
// [--coordinator-wait-seconds S] [--reconnect-wait-seconds S]`: a worker process. The shared key
// comes from a file (key-file.ts), named by --key-file or by ROUNDWIRE_KEY_FILE. --ca names PEM
// certificates to trust for a wss:// coordinator beside the system's (a self-signed one).

import { readFileSync } from 'node:fs';
import { hostname } from 'node:os';
import { Worker, type WorkerExit } from '../../client/worker.js';
import { WorkerMetrics } from '../../client/metrics.js';
import {
  lingerFor,
  metricsListeningLine,
  startMetricsServer,
  type MetricsAddress,
  type MetricsServer,
} from '../../runtime/metrics-server.js';
import { keyFileSource, KEY_FILE_ENVIRONMENT_VARIABLE, readKeyFile } from './key-file.js';

export interface WorkerCommandOptions {
  /** the file holding the shared key (absent: ROUNDWIRE_KEY_FILE) */
  keyFile?: string;
  /** how many clients this worker offers to host */
  capacity: number;
  name?: string;
  /** serve the worker's metrics at http://HOST:PORT/metrics */
  metrics?: MetricsAddress;
  /** after the coordinator says done, keep serving metrics this long */
  metricsLinger: number;
  /** PEM certificates to trust for a wss:// coordinator, beside the system's */
  ca?: string;
  /** most seconds of waiting for the coordinator to answer the first time (absent: JOIN_RETRY_POLICY's) */
  coordinatorWaitSeconds?: number;
  /** most seconds of waiting for a coordinator that dropped mid-run (absent: RECONNECT_RETRY_POLICY's) */
  reconnectWaitSeconds?: number;
}

/** Most --reconnect-wait-seconds: a day; an operator resumes a coordinator well within it. */
export const RECONNECT_WAIT_SECONDS_MAX = 86_400;

/** Most --coordinator-wait-seconds: a day; a cluster starts its coordinator well within it. */
export const COORDINATOR_WAIT_SECONDS_MAX = 86_400;

/** A CA file far larger than any certificate bundle is a wrong path, not certificates. */
export const CA_FILE_BYTES_MAX = 1024 * 1024;

/** The certificates of a --ca file (PEM text), or why it cannot serve. */
export function readTrustedCertificates(file: string): { pem: string } | { problem: string } {
  let text: string;
  try {
    const bytes = readFileSync(file);
    if (bytes.byteLength > CA_FILE_BYTES_MAX)
      return {
        problem: `--ca: ${file} is larger than ${CA_FILE_BYTES_MAX} bytes; expected PEM certificates`,
      };
    text = bytes.toString('utf8');
  } catch (error) {
    return { problem: `--ca: cannot read ${file} (${(error as Error).message})` };
  }
  if (!text.includes('-----BEGIN CERTIFICATE-----'))
    return { problem: `--ca: ${file} holds no PEM certificate (-----BEGIN CERTIFICATE-----)` };
  return { pem: text };
}

/** Most clients one worker offers to host; the scenario schema allows 10,000 clients in all. */
export const WORKER_CAPACITY_MAX = 10_000;

/** Why `text` is not a coordinator address, or null. */
export function coordinatorUrlProblem(text: string): string | null {
  const expected = `coordinator-url: expected ws://HOST:PORT or wss://HOST:PORT, got "${text}"`;
  let url: URL;
  try {
    url = new URL(text);
  } catch {
    return expected;
  }
  if ((url.protocol !== 'ws:' && url.protocol !== 'wss:') || url.hostname === '') return expected;
  return null;
}

/** The coordinator-url argument that means: read the URL as one line from standard input. */
export const URL_FROM_STDIN = '-';

/** Longest line read as a coordinator URL from standard input. */
export const URL_LINE_BYTES_MAX = 2048;

/** Longest wait for that line: a day, as for --coordinator-wait-seconds. */
export const URL_LINE_WAIT_SECONDS_MAX = COORDINATOR_WAIT_SECONDS_MAX;

/**
 * The first line of `input` (the coordinator URL, for `roundwire worker -`), without its line
 * end and surrounding blanks. Throws an Error naming the reason when the input ends before a
 * line, the line is longer than URL_LINE_BYTES_MAX, or no line comes within `waitSeconds`.
 */
export function readUrlLine(
  input: NodeJS.ReadableStream,
  waitSeconds: number = URL_LINE_WAIT_SECONDS_MAX,
): Promise<string> {
  return new Promise((resolve, reject) => {
    let text = '';
    const finish = (error: Error | null, line?: string): void => {
      clearTimeout(timer);
      input.off('data', onData);
      input.off('end', onEnd);
      input.off('error', onError);
      input.pause();
      if (error === null) resolve(line!);
      else reject(error);
    };
    const onData = (chunk: Buffer | string): void => {
      text += chunk.toString();
      const end = text.indexOf('\n');
      if (end >= 0 && end <= URL_LINE_BYTES_MAX) finish(null, text.slice(0, end).trim());
      else if (text.length > URL_LINE_BYTES_MAX)
        finish(
          new Error(
            `coordinator-url: the line on standard input is longer than ${URL_LINE_BYTES_MAX} bytes`,
          ),
        );
    };
    const onEnd = (): void =>
      text.trim() === ''
        ? finish(
            new Error(
              'coordinator-url: "-" reads the URL from standard input, which ended before a line',
            ),
          )
        : finish(null, text.trim());
    const onError = (error: Error): void =>
      finish(new Error(`coordinator-url: reading standard input failed (${error.message})`));
    const timer = setTimeout(
      () => finish(new Error(`coordinator-url: no line on standard input within ${waitSeconds} s`)),
      waitSeconds * 1000,
    );
    timer.unref();
    input.on('data', onData);
    input.on('end', onEnd);
    input.on('error', onError);
  });
}

/** Returns a problem with the arguments (bad input), or null when they are usable. */
export function workerOptionsProblem(
  url: string,
  opts: WorkerCommandOptions,
  env: NodeJS.ProcessEnv,
): string | null {
  const urlProblem = coordinatorUrlProblem(url);
  if (urlProblem !== null) return urlProblem;
  if (keyFileSource(opts.keyFile, env) === null)
    return `a key file is needed: --key-file PATH, or ${KEY_FILE_ENVIRONMENT_VARIABLE} naming the file`;
  if (opts.ca !== undefined) {
    if (!url.startsWith('wss://'))
      return `--ca is for a wss:// coordinator; the coordinator URL is "${url}"`;
    const certificates = readTrustedCertificates(opts.ca);
    if ('problem' in certificates) return certificates.problem;
  }
  return null;
}

export async function runWorkerCommand(
  url: string,
  opts: WorkerCommandOptions,
  env: NodeJS.ProcessEnv,
  err: (text: string) => void,
): Promise<WorkerExit> {
  const key = readKeyFile(keyFileSource(opts.keyFile, env)!);
  const workerName = opts.name ?? `${hostname()}-${process.pid}`;
  const metrics = opts.metrics === undefined ? null : new WorkerMetrics();
  let metricsServer: MetricsServer | null = null;
  if (metrics !== null && opts.metrics !== undefined) {
    metricsServer = await startMetricsServer(metrics.registry, opts.metrics);
    err(`worker ${workerName}: ${metricsListeningLine(metricsServer, opts.metrics)}`);
  }
  const certificates = opts.ca === undefined ? null : readTrustedCertificates(opts.ca);
  const worker = new Worker({
    url,
    key,
    capacity: opts.capacity,
    workerName,
    threadsMax: opts.capacity,
    ...(opts.coordinatorWaitSeconds === undefined
      ? {}
      : { coordinatorWaitSeconds: opts.coordinatorWaitSeconds }),
    ...(opts.reconnectWaitSeconds === undefined
      ? {}
      : { reconnectWaitSeconds: opts.reconnectWaitSeconds }),
    ...(metrics === null ? {} : { metrics }),
    ...(certificates !== null && 'pem' in certificates
      ? { trustedCertificatesPem: certificates.pem }
      : {}),
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
      err(
        `worker ${workerName}: metrics: the run is over; serving final values at ${metricsServer.url} for ${opts.metricsLinger} s\n`,
      );
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
