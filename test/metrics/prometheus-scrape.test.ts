// A real Prometheus server (Debian's prometheus package; CI installs it with apt-get) scrapes a
// running coordinator and a worker every second, and every query of the Grafana dashboard, sent
// to Prometheus's HTTP API (/api/v1/query), returns data. The worker's exposition passes
// `promtool check metrics`, and the example scrape configuration passes `promtool check config`.
// A missing Prometheus fails the test with a message saying so; it never skips.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { parse as parseYaml } from 'yaml';
import { CliProcess, freshDir, repoRoot, writeKeyFile } from '../integration/cli-process.js';
import {
  fetchText,
  PrometheusServer,
  promtoolCheckConfig,
  promtoolCheckMetrics,
  waitFor,
  type QueryResult,
} from './prometheus-tools.js';

interface DashboardPanel {
  type: string;
  title: string;
  datasource?: { type: string; uid: string };
  targets?: { expr: string; datasource?: { type: string; uid: string } }[];
}

const dashboard = JSON.parse(
  readFileSync(join(repoRoot, 'grafana/dashboards/roundwire.json'), 'utf8'),
) as { uid: string; schemaVersion: number; panels: DashboardPanel[] };
const queries = dashboard.panels.flatMap((p) =>
  (p.targets ?? []).map((t) => ({ panel: p.title, expr: t.expr })),
);

/** Grafana's $__rate_interval, fixed for a query sent straight to Prometheus (1 s scrapes: many samples). */
function forPrometheus(expr: string): string {
  return expr.replaceAll('$__rate_interval', '1m');
}

const KEY = 'a-key-for-the-metrics-test';
const started: CliProcess[] = [];
let prometheus: PrometheusServer | null = null;

afterAll(async () => {
  await prometheus?.stop();
  for (const p of started) p.child.kill('SIGINT');
  await Promise.all(started.map((p) => p.exit(15_000).catch(() => p.kill())));
});

/** Starts a command that reads its key file from ROUNDWIRE_KEY_FILE, the way an environment names it once for every command. */
function start(args: string[], keyFile: string): CliProcess {
  const p = new CliProcess(args, { ROUNDWIRE_KEY_FILE: keyFile });
  started.push(p);
  return p;
}

function nonEmpty(result: QueryResult): boolean {
  return result.status === 'success' && (result.data?.result.length ?? 0) > 0;
}

describe('the Grafana folder', () => {
  it('has a dashboard of Grafana 10+ schema whose every panel queries the data source variable', () => {
    // Grafana 10.0 writes schemaVersion 38 (value recalled from memory); later versions higher.
    expect(dashboard.schemaVersion).toBeGreaterThanOrEqual(38);
    expect(queries.length).toBeGreaterThan(10);
    for (const p of dashboard.panels.filter((q) => q.type !== 'row')) {
      expect(p.datasource, p.title).toEqual({ type: 'prometheus', uid: '${datasource}' });
      for (const t of p.targets ?? []) expect(t.expr, p.title).toMatch(/roundwire_/);
    }
  });

  it('has provisioning for the data source and the dashboard, and a scrape config promtool accepts', () => {
    const datasources = parseYaml(
      readFileSync(join(repoRoot, 'grafana/provisioning/datasources/prometheus.yaml'), 'utf8'),
    ) as { datasources: { type: string }[] };
    expect(datasources.datasources[0].type).toBe('prometheus');
    const providers = parseYaml(
      readFileSync(join(repoRoot, 'grafana/provisioning/dashboards/roundwire.yaml'), 'utf8'),
    ) as { providers: { type: string; options: { path: string } }[] };
    expect(providers.providers[0].type).toBe('file');
    expect(providers.providers[0].options.path).toMatch(/dashboards$/);
    const check = promtoolCheckConfig(join(repoRoot, 'grafana/prometheus.yml'));
    expect(check.status, check.output).toBe(0);
  });
});

describe('Prometheus scraping a coordinator and a worker', () => {
  it('answers every dashboard query with data', async () => {
    const out = freshDir('metrics-prometheus');
    const keyFile = writeKeyFile(out, KEY);
    const coordinator = start(
      [
        'coordinator',
        join(repoRoot, 'scenarios/quickstart.yaml'),
        '--listen',
        '127.0.0.1:0',
        '--workers-min',
        '2',
        '--out',
        out,
        '--tweak',
        'run.rounds:30',
        '--metrics',
        '127.0.0.1:0',
        '--metrics-linger',
        '60',
      ],
      keyFile,
    );
    const coordinatorUrl = (
      await coordinator.waitForStderr(/listening on (ws:\/\/\S+)/, 30_000)
    )[1];
    const coordinatorMetrics = new URL(
      (await coordinator.waitForStderr(/metrics on (http:\/\/\S+)/, 5_000))[1],
    );
    const metered = start(
      [
        'worker',
        coordinatorUrl,
        '--capacity',
        '8',
        '--name',
        'metered',
        '--metrics',
        '127.0.0.1:0',
        '--metrics-linger',
        '60',
      ],
      keyFile,
    );
    const workerMetrics = new URL(
      (await metered.waitForStderr(/metrics on (http:\/\/\S+)/, 30_000))[1],
    );

    prometheus = await PrometheusServer.start({
      'roundwire-coordinator': [coordinatorMetrics.host],
      'roundwire-workers': [workerMetrics.host],
    });
    // Both targets scraped before the run starts, so that rates span the run.
    await waitFor('both targets up', 30_000, async () => {
      const up = await prometheus!.query('up == 1');
      return up.data?.result.length === 2 ? true : null;
    });
    start(['worker', coordinatorUrl, '--capacity', '8', '--name', 'plain'], keyFile);
    await coordinator.waitForStderr(/metrics: the run is over/, 50_000);
    await metered.waitForStderr(/metrics: the run is over/, 20_000);
    const summary = JSON.parse(readFileSync(join(out, 'outcome.json'), 'utf8')) as {
      rounds: number;
    };

    await waitFor('the final round count scraped', 20_000, async () => {
      const rounds = await prometheus!.query('roundwire_rounds_completed_total');
      return rounds.data?.result[0]?.value[1] === String(summary.rounds) ? true : null;
    });
    // Series born during the run need a second scrape before rate() has two samples.
    const empty = await waitFor('every dashboard query answered', 20_000, async () => {
      const missing: string[] = [];
      for (const q of queries)
        if (!nonEmpty(await prometheus!.query(forPrometheus(q.expr))))
          missing.push(`${q.panel}: ${q.expr}`);
      return missing.length === 0 ? missing : null;
    }).catch(async () => {
      const missing: string[] = [];
      for (const q of queries) {
        const result = await prometheus!.query(forPrometheus(q.expr));
        if (!nonEmpty(result))
          missing.push(`${q.panel}: ${q.expr} -> ${JSON.stringify(result).slice(0, 300)}`);
      }
      return missing;
    });
    expect(empty).toEqual([]);

    const workerText = await fetchText(workerMetrics.href);
    expect(workerText.text).toMatch(/^roundwire_worker_local_steps_total\{client="\d+"\} [1-9]/m);
    const check = promtoolCheckMetrics(workerText.text);
    expect(check.output.trim()).toBe('');
    expect(check.status).toBe(0);
  }, 120_000);
});
