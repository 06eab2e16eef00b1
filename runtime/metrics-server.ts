// The /metrics endpoint: a small node:http server that answers GET /metrics with a registry's
// Prometheus text exposition and nothing else. Loopback unless the caller was told otherwise:
// metrics name clients and workers, which is nobody's business beyond this machine by default.

import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import type { Registry } from 'prom-client';
import { isLoopbackHost, parseHostPort, urlHost, type HostPort } from './address.js';
import { listenFailure } from './listen-error.js';

export type MetricsAddress = HostPort;

export class MetricsOptionError extends Error {
  readonly code = 'E_METRICS_OPTION';
}

export const METRICS_HOST_DEFAULT = '127.0.0.1';
export const METRICS_PATH = '/metrics';

/** A scrape that takes longer than this is cut off (Prometheus's own default timeout is 10 s). */
const SCRAPE_TIMEOUT_MS = 10_000;
/** Scrapers at once: a handful of Prometheus servers, not a crowd. */
const CONNECTIONS_MAX = 16;

/** HOST:PORT, [IPv6]:PORT or a bare PORT (on 127.0.0.1). Throws MetricsOptionError when malformed. */
export function parseMetricsAddress(text: string): MetricsAddress {
  const address = parseHostPort(text, METRICS_HOST_DEFAULT);
  if (address === null) {
    throw new MetricsOptionError(
      `--metrics: expected HOST:PORT or PORT (e.g. 127.0.0.1:9464, port 0: any free port), got "${text}"`,
    );
  }
  return address;
}

/** Linger after the run: the most a finished process keeps serving. */
export const METRICS_LINGER_SECONDS_MAX = 86_400;

export interface MetricsServer {
  /** http://HOST:PORT/metrics as bound */
  url: string;
  port: number;
  close(): Promise<void>;
}

/** Where the endpoint reports a server error once listening, when the caller names no place. */
function logToStderr(line: string): void {
  process.stderr.write(`${line}\n`);
}

/** Serves `registry` at /metrics on `address`; resolves once listening, rejects with a ListenError when the address cannot be had. */
export function startMetricsServer(
  registry: Registry,
  address: MetricsAddress,
  log: (line: string) => void = logToStderr,
): Promise<MetricsServer> {
  const server: Server = createServer((request, response) => {
    const path = (request.url ?? '').split('?')[0];
    if (path !== METRICS_PATH) {
      response
        .writeHead(404, { 'content-type': 'text/plain; charset=utf-8' })
        .end(`not found; metrics are at ${METRICS_PATH}\n`);
      return;
    }
    if (request.method !== 'GET' && request.method !== 'HEAD') {
      response
        .writeHead(405, { allow: 'GET, HEAD', 'content-type': 'text/plain; charset=utf-8' })
        .end('method not allowed\n');
      return;
    }
    registry.metrics().then(
      (text) => {
        response.writeHead(200, { 'content-type': registry.contentType });
        response.end(request.method === 'HEAD' ? undefined : text);
      },
      (error: Error) => {
        response
          .writeHead(500, { 'content-type': 'text/plain; charset=utf-8' })
          .end(`metrics failed: ${error.message}\n`);
      },
    );
  });
  server.requestTimeout = SCRAPE_TIMEOUT_MS;
  server.maxConnections = CONNECTIONS_MAX;
  return new Promise((resolve, reject) => {
    const onError = (error: Error): void => reject(listenFailure(error, '--metrics', address));
    server.once('error', onError);
    server.listen(address.port, address.host, () => {
      server.off('error', onError);
      // A failure to accept one scraper (say, no file descriptor left) must not end the run: an
      // 'error' with no listener would. A malformed request is answered 400 by node:http itself.
      server.on('error', (error) => log(`metrics endpoint: ${error.message}`));
      const bound = server.address() as AddressInfo;
      resolve({
        url: `http://${urlHost(address.host)}:${bound.port}${METRICS_PATH}`,
        port: bound.port,
        close: () =>
          new Promise<void>((done) => {
            server.close(() => done());
            server.closeAllConnections();
          }),
      });
    });
  });
}

/** Waits `seconds` (or until `cut` is called) so that a scraper can read a finished run's final values. */
export function lingerFor(seconds: number): { done: Promise<void>; cut: () => void } {
  let cut: () => void = () => undefined;
  const done = new Promise<void>((resolve) => {
    const timer = setTimeout(resolve, seconds * 1000);
    cut = () => {
      clearTimeout(timer);
      resolve();
    };
  });
  return { done, cut };
}

/** The line a command prints once the endpoint listens. */
export function metricsListeningLine(server: MetricsServer, address: MetricsAddress): string {
  const exposure = isLoopbackHost(address.host)
    ? ''
    : ' (not loopback: anyone who can reach this address can read them)';
  return `metrics on ${server.url}${exposure}\n`;
}
