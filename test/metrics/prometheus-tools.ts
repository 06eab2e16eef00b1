// What the metrics tests share: reading an endpoint, linting its text with promtool and running a
// real Prometheus server (Debian's prometheus package, as CI installs it) on a free loopback port
// with a scratch config and data folder. Every wait is bounded; a missing binary fails the test.

import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { createServer, type AddressInfo } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

export const PROMETHEUS_BIN = '/usr/bin/prometheus';
export const PROMTOOL_BIN = '/usr/bin/promtool';

export function requireBinary(path: string): void {
  if (!existsSync(path))
    throw new Error(
      `${path} is missing: install Debian's prometheus package (apt-get install prometheus); CI does`,
    );
}

export async function fetchText(
  url: string,
): Promise<{ status: number; contentType: string | null; text: string }> {
  const response = await fetch(url, { signal: AbortSignal.timeout(10_000) });
  return {
    status: response.status,
    contentType: response.headers.get('content-type'),
    text: await response.text(),
  };
}

/** `promtool check metrics` on exposition text: its exit code and complaints. */
export function promtoolCheckMetrics(text: string): { status: number | null; output: string } {
  requireBinary(PROMTOOL_BIN);
  const result = spawnSync(PROMTOOL_BIN, ['check', 'metrics'], {
    input: text,
    encoding: 'utf8',
    timeout: 20_000,
  });
  return { status: result.status, output: `${result.stdout}${result.stderr}` };
}

export function promtoolCheckConfig(file: string): { status: number | null; output: string } {
  requireBinary(PROMTOOL_BIN);
  const result = spawnSync(PROMTOOL_BIN, ['check', 'config', file], {
    encoding: 'utf8',
    timeout: 20_000,
  });
  return { status: result.status, output: `${result.stdout}${result.stderr}` };
}

export function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const server = createServer();
    server.once('error', reject);
    server.listen(0, '127.0.0.1', () => {
      const { port } = server.address() as AddressInfo;
      server.close(() => resolve(port));
    });
  });
}

export async function waitFor<T>(
  what: string,
  timeoutMs: number,
  probe: () => Promise<T | null>,
): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  let lastError = '';
  for (;;) {
    try {
      const value = await probe();
      if (value !== null) return value;
    } catch (error) {
      lastError = (error as Error).message;
    }
    if (Date.now() > deadline)
      throw new Error(
        `${what}: not within ${timeoutMs} ms${lastError === '' ? '' : ` (last error: ${lastError})`}`,
      );
    await new Promise((r) => setTimeout(r, 250));
  }
}

export interface QueryResult {
  status: string;
  data?: {
    resultType: string;
    result: { metric: Record<string, string>; value: [number, string] }[];
  };
  error?: string;
}

export class PrometheusServer {
  readonly url: string;
  private readonly child: ChildProcess;
  private readonly folder: string;
  log = '';

  private constructor(url: string, child: ChildProcess, folder: string) {
    this.url = url;
    this.child = child;
    this.folder = folder;
    child.stderr!.setEncoding('utf8').on('data', (t: string) => {
      this.log = (this.log + t).slice(-20_000);
    });
  }

  /** Starts Prometheus scraping `jobs` (job name -> HOST:PORT targets) every second. */
  static async start(jobs: Record<string, string[]>): Promise<PrometheusServer> {
    requireBinary(PROMETHEUS_BIN);
    const folder = mkdtempSync(join(tmpdir(), 'roundwire-prometheus-'));
    const scrapeConfigs = Object.entries(jobs)
      .map(
        ([job, targets]) =>
          `  - job_name: ${job}\n    static_configs:\n      - targets: [${targets.map((t) => `'${t}'`).join(', ')}]\n`,
      )
      .join('');
    const config = join(folder, 'prometheus.yml');
    writeFileSync(
      config,
      `global:\n  scrape_interval: 1s\n  scrape_timeout: 1s\n  evaluation_interval: 1s\nscrape_configs:\n${scrapeConfigs}`,
    );
    const port = await freePort();
    const child = spawn(
      PROMETHEUS_BIN,
      [
        `--config.file=${config}`,
        `--storage.tsdb.path=${join(folder, 'data')}`,
        `--web.listen-address=127.0.0.1:${port}`,
      ],
      { stdio: ['ignore', 'ignore', 'pipe'] },
    );
    const server = new PrometheusServer(`http://127.0.0.1:${port}`, child, folder);
    await waitFor(`Prometheus ready on port ${port}`, 30_000, async () => {
      if (child.exitCode !== null)
        throw new Error(`prometheus exited with ${child.exitCode}:\n${server.log}`);
      const response = await fetch(`${server.url}/-/ready`, { signal: AbortSignal.timeout(2000) });
      return response.status === 200 ? true : null;
    });
    return server;
  }

  async query(expr: string): Promise<QueryResult> {
    const response = await fetch(`${this.url}/api/v1/query?query=${encodeURIComponent(expr)}`, {
      signal: AbortSignal.timeout(10_000),
    });
    return (await response.json()) as QueryResult;
  }

  /** Stops the server (SIGTERM, then SIGKILL after 5 s) and removes its folder. */
  async stop(): Promise<void> {
    if (this.child.exitCode === null && this.child.signalCode === null) {
      const exited = new Promise((r) => this.child.once('exit', r));
      this.child.kill('SIGTERM');
      const timer = setTimeout(() => this.child.kill('SIGKILL'), 5000);
      await exited;
      clearTimeout(timer);
    }
    rmSync(this.folder, { recursive: true, force: true });
  }
}
