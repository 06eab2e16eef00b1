// /metrics of a real `roundwire run`, read during --metrics-linger after the run ended, parsed by
// an independent parser (parse-prometheus-text-format, which follows the Prometheus text
// exposition format, prometheus.io/docs/instrumenting/exposition_formats) and checked against the
// same run's outcome.json: names, types, labels, and values that must agree exactly (rounds,
// bytes by direction and layer summed over clients, final f - f*, drops, the rates). The text
// must also pass `promtool check metrics` (Prometheus's own linter) without a complaint.

import { LIMIT_REASONS } from '../../server/limit-reasons.js';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import parsePrometheusTextFormat, { type ParsedFamily } from 'parse-prometheus-text-format';
import { FRAME_ERROR_REASONS, PROTOCOL_ERROR_CODES } from '../../src/protocol/index.js';
import { ROUND_DURATION_BUCKETS_SECONDS } from '../../server/metrics.js';
import { CliProcess, freshDir, repoRoot } from '../integration/cli-process.js';
import { fetchText, promtoolCheckMetrics } from './prometheus-tools.js';

interface Summary {
  method: string;
  rounds: number;
  clients: number;
  suboptimality: { initial: number; final: number };
  distance: { final: number };
  rate: { measured: number | null; predicted: number | null };
  bytes: Record<'payload' | 'encoded' | 'wire', { up: number; down: number }>;
  droppedUpdates: number;
  lostWorkers: string[];
  heldOut?: { final: { loss: number } };
}

const LINGER_SECONDS = 20;

let run: CliProcess;
let text = '';
let contentType: string | null = null;
let summary: Summary;
let families: Map<string, ParsedFamily>;

beforeAll(async () => {
  const out = freshDir('metrics-run');
  run = new CliProcess([
    'run',
    join(repoRoot, 'scenarios/quickstart.yaml'),
    '--out',
    out,
    '--tweak',
    'run.rounds:30',
    '--tweak',
    'data.testFraction:0.2',
    '--metrics',
    '127.0.0.1:0',
    '--metrics-linger',
    String(LINGER_SECONDS),
  ]);
  const url = (
    await run.waitForStderr(/metrics on (http:\/\/127\.0\.0\.1:\d+\/metrics)/, 30_000)
  )[1];
  await run.waitForStderr(/metrics: the run is over/, 50_000);
  const scraped = await fetchText(url);
  expect(scraped.status).toBe(200);
  text = scraped.text;
  contentType = scraped.contentType;
  summary = JSON.parse(readFileSync(join(out, 'outcome.json'), 'utf8')) as Summary;
  families = new Map(parsePrometheusTextFormat(text).map((f) => [f.name, f]));
}, 60_000);

afterAll(async () => {
  // The linger is long enough for the checks; the test need not wait it out.
  run?.child.kill('SIGINT');
  await run?.exit(15_000).catch(() => run.kill());
});

function family(name: string, type: ParsedFamily['type']): ParsedFamily {
  const f = families.get(name);
  expect(f, `${name} is exposed`).toBeDefined();
  expect(f!.type, `${name} type`).toBe(type);
  expect(f!.help.length, `${name} has HELP`).toBeGreaterThan(0);
  return f!;
}

function single(name: string, type: ParsedFamily['type']): number {
  const f = family(name, type);
  expect(f.metrics).toHaveLength(1);
  return Number(f.metrics[0].value);
}

describe('coordinator /metrics after a real run', () => {
  it('is the text exposition format, version 0.0.4', () => {
    // prometheus.io/docs/instrumenting/exposition_formats: text/plain; version=0.0.4
    expect(contentType).toMatch(/^text\/plain; version=0\.0\.4/);
  });

  it('counts the rounds and ends at the summary values', () => {
    expect(single('roundwire_rounds_completed_total', 'COUNTER')).toBe(summary.rounds);
    expect(single('roundwire_round_current', 'GAUGE')).toBe(summary.rounds);
    expect(single('roundwire_suboptimality', 'GAUGE')).toBe(summary.suboptimality.final);
    expect(single('roundwire_suboptimality_initial', 'GAUGE')).toBe(summary.suboptimality.initial);
    expect(single('roundwire_distance_to_optimum', 'GAUGE')).toBe(summary.distance.final);
    expect(family('roundwire_run_info', 'GAUGE').metrics).toEqual([
      { labels: { method: summary.method }, value: '1' },
    ]);
    expect(summary.rate.predicted).not.toBeNull();
    expect(single('roundwire_rate_predicted', 'GAUGE')).toBe(summary.rate.predicted);
    expect(summary.rate.measured).not.toBeNull();
    expect(single('roundwire_rate_measured', 'GAUGE')).toBe(summary.rate.measured);
  });

  it('exposes the held-out test loss; least squares has no accuracy (NaN)', () => {
    expect(summary.heldOut).toBeDefined();
    expect(single('roundwire_test_loss', 'GAUGE')).toBe(summary.heldOut!.final.loss);
    expect(single('roundwire_test_accuracy_ratio', 'GAUGE')).toBeNaN();
    const clients = family('roundwire_client_test_accuracy_ratio', 'GAUGE').metrics;
    expect(clients.map((m) => m.labels?.summary).sort()).toEqual(['mean', 'range', 'worst']);
    expect(clients.every((m) => Number.isNaN(Number(m.value)))).toBe(true);
  });

  it('splits bytes by direction, layer and client, summing to summary.bytes', () => {
    const f = family('roundwire_bytes_total', 'COUNTER');
    const sums: Record<string, number> = {};
    const clientsSeen = new Set<string>();
    for (const m of f.metrics) {
      const { direction, layer, client } = m.labels ?? {};
      expect(['up', 'down']).toContain(direction);
      expect(['payload', 'encoded', 'wire']).toContain(layer);
      clientsSeen.add(client);
      sums[`${layer}.${direction}`] = (sums[`${layer}.${direction}`] ?? 0) + Number(m.value);
    }
    expect(clientsSeen).toEqual(
      new Set(Array.from({ length: summary.clients }, (_, i) => String(i))),
    );
    for (const layer of ['payload', 'encoded', 'wire'] as const) {
      for (const direction of ['up', 'down'] as const)
        expect(sums[`${layer}.${direction}`], `${layer} ${direction}`).toBe(
          summary.bytes[layer][direction],
        );
    }
    const control = family('roundwire_control_bytes_total', 'COUNTER');
    expect(control.metrics).toHaveLength(4);
  });

  it('has a round-duration histogram per clock with one observation per round', () => {
    family('roundwire_round_duration_seconds', 'HISTOGRAM');
    // parse-prometheus-text-format 1.1.1 folds a labelled histogram's series into one (its
    // flattenMetrics keeps label-free samples only), so each clock's series is parsed on its own.
    for (const clock of ['wall', 'modelled']) {
      const label = `clock="${clock}"`;
      const lines = text
        .split('\n')
        .filter((l) =>
          l.startsWith('# ')
            ? l.includes(' roundwire_round_duration_seconds ')
            : l.startsWith('roundwire_round_duration_seconds') && l.includes(label),
        );
      const unlabelled = lines
        .map((l) => l.replace(`,${label}`, '').replace(`{${label}}`, ''))
        .join('\n');
      const [f] = parsePrometheusTextFormat(`${unlabelled}\n`);
      expect(f.metrics).toHaveLength(1);
      const m = f.metrics[0];
      expect(Number(m.count), clock).toBe(summary.rounds);
      // Buckets are cumulative: the +Inf bucket holds every observation (exposition format).
      expect(Number(m.buckets!['+Inf']), clock).toBe(summary.rounds);
      expect(Object.keys(m.buckets!)).toHaveLength(ROUND_DURATION_BUCKETS_SECONDS.length + 1);
    }
  });

  it('has per-client work, steps and drops, and workers, errors and losses', () => {
    const clientCount = (name: string, type: ParsedFamily['type']) =>
      new Set(family(name, type).metrics.map((m) => m.labels?.client)).size;
    expect(clientCount('roundwire_client_compute_seconds_total', 'COUNTER')).toBe(summary.clients);
    expect(clientCount('roundwire_client_idle_seconds_total', 'COUNTER')).toBe(summary.clients);
    expect(clientCount('roundwire_client_local_steps_total', 'COUNTER')).toBe(summary.clients);
    expect(clientCount('roundwire_client_local_steps_last', 'GAUGE')).toBe(summary.clients);
    const dropped = family('roundwire_dropped_updates_total', 'COUNTER').metrics.reduce(
      (s, m) => s + Number(m.value),
      0,
    );
    expect(dropped).toBe(summary.droppedUpdates);
    const errors = family('roundwire_protocol_errors_total', 'COUNTER');
    expect(errors.metrics).toHaveLength(
      2 * PROTOCOL_ERROR_CODES.length + FRAME_ERROR_REASONS.length + LIMIT_REASONS.length,
    );
    const codesOf: Record<string, readonly string[]> = {
      frame: FRAME_ERROR_REASONS,
      limit: LIMIT_REASONS,
    };
    for (const m of errors.metrics) {
      expect(codesOf[m.labels?.origin ?? ''] ?? PROTOCOL_ERROR_CODES).toContain(m.labels?.code);
      expect(Number(m.value)).toBe(0);
    }
    expect(single('roundwire_workers_lost_total', 'COUNTER')).toBe(summary.lostWorkers.length);
    // The run is over: its workers said goodbye.
    expect(single('roundwire_workers_connected', 'GAUGE')).toBe(0);
  });

  it('passes promtool check metrics', () => {
    const check = promtoolCheckMetrics(text);
    expect(check.output.trim()).toBe('');
    expect(check.status).toBe(0);
  });
});
