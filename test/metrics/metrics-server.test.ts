// The /metrics endpoint and the coordinator's label bounds, in process. The endpoint answers only
// GET or HEAD /metrics, with the text exposition content type prom-client declares; the client
// label stays bounded (Prometheus's guidance against high-cardinality labels,
// prometheus.io/docs/practices/naming/#labels): ids from CLIENT_LABELS_MAX on share "other",
// whose value is the sum of theirs.

import { afterEach, describe, expect, it } from 'vitest';
import { Counter, Registry } from 'prom-client';
import parsePrometheusTextFormat from 'parse-prometheus-text-format';
import {
  parseMetricsAddress,
  startMetricsServer,
  type MetricsServer,
} from '../../runtime/metrics-server.js';
import { CoordinatorMetrics, type CoordinatorMetricsSources } from '../../server/metrics.js';
import { CLIENT_LABELS_MAX } from '../../server/metrics-labels.js';
import type { LayerBytes } from '../../server/byte-ledger.js';
import type { ClientRoundRecord, RoundRecord } from '../../src/engine/round-record.js';

describe('--metrics values', () => {
  it('reads HOST:PORT, [IPv6]:PORT and a bare PORT on loopback', () => {
    expect(parseMetricsAddress('0.0.0.0:9464')).toEqual({ host: '0.0.0.0', port: 9464 });
    expect(parseMetricsAddress('[::1]:0')).toEqual({ host: '::1', port: 0 });
    expect(parseMetricsAddress('9464')).toEqual({ host: '127.0.0.1', port: 9464 });
  });

  it('refuses malformed addresses and ports beyond 65535 with a stable code', () => {
    for (const bad of ['', 'host', 'host:', ':9464', '127.0.0.1:65536', '::1:80']) {
      expect(() => parseMetricsAddress(bad), bad).toThrow(
        expect.objectContaining({ code: 'E_METRICS_OPTION' }),
      );
    }
  });
});

describe('the /metrics endpoint', () => {
  let server: MetricsServer | null = null;
  afterEach(async () => {
    await server?.close();
    server = null;
  });

  it('serves the registry at /metrics only, on the port the OS picked', async () => {
    const registry = new Registry();
    new Counter({
      name: 'roundwire_test_events_total',
      help: 'Events.',
      registers: [registry],
    }).inc(3);
    server = await startMetricsServer(registry, { host: '127.0.0.1', port: 0 });
    expect(server.port).toBeGreaterThan(0);
    expect(server.url).toBe(`http://127.0.0.1:${server.port}/metrics`);
    const ok = await fetch(server.url);
    expect(ok.status).toBe(200);
    expect(ok.headers.get('content-type')).toBe(registry.contentType);
    const [family] = parsePrometheusTextFormat(await ok.text());
    expect(family).toMatchObject({
      name: 'roundwire_test_events_total',
      type: 'COUNTER',
      metrics: [{ value: '3' }],
    });
    expect((await fetch(`http://127.0.0.1:${server.port}/`)).status).toBe(404);
    expect((await fetch(server.url, { method: 'POST' })).status).toBe(405);
  });
});

function layers(n: number): LayerBytes {
  return { payload: n, encoded: 2 * n, wire: 2 * n + 6 };
}

describe('coordinator metrics labels', () => {
  const clientCount = CLIENT_LABELS_MAX + 44;
  const totals: Record<string, { up: LayerBytes; down: LayerBytes }> = {};
  for (let id = 0; id < clientCount; id++)
    totals[String(id)] = { up: layers(id + 1), down: layers(10 * (id + 1)) };
  const sources: CoordinatorMetricsSources = {
    ledger: {
      clientTotals: () => totals,
      controlTotals: () => ({ encoded: { up: 1, down: 2 }, wire: { up: 3, down: 4 } }),
    },
    currentRound: () => 1,
    connectedWorkers: () => 2,
    lostWorkers: () => 0,
    protocolErrors: () => ({
      received: { E_DIMENSION: 2 },
      reported: {},
      frame: { E_FRAME_MASK: 3 },
      limit: { E_LIMIT_MESSAGE_RATE: 4 },
    }),
    clientCount,
    optimumLoss: 0,
    predictedRate: () => null,
    method: 'scaffold',
  };

  it('aggregates clients beyond the label limit under client="other"', async () => {
    const metrics = new CoordinatorMetrics(sources);
    const round: RoundRecord = {
      round: 1,
      suboptimality: 0.5,
      predictedSuboptimality: 0.25,
      distance: 0.1,
      bytes: { payload: { up: 0, down: 0 } },
      localSteps: {},
      dropped: [clientCount - 1],
      roundSeconds: 0.01,
      virtualSeconds: 0.01,
      wallSeconds: 0.02,
    };
    const clients: ClientRoundRecord[] = [];
    for (const id of [0, CLIENT_LABELS_MAX, clientCount - 1]) {
      round.localSteps[String(id)] = 5;
      clients.push({
        round: 1,
        exchange: 'local',
        clientId: id,
        localSteps: 5,
        computeSeconds: 0.25,
        waitSeconds: 0.5,
        transferSeconds: 0,
        bytes: { payload: { up: 0, down: 0 } },
        dropped: false,
      });
    }
    metrics.roundRecorded({ ...round, round: 0, localSteps: {}, dropped: [], wallSeconds: 0 }, []);
    metrics.roundRecorded(round, clients);
    const families = new Map(
      parsePrometheusTextFormat(await metrics.registry.metrics()).map((f) => [f.name, f]),
    );

    const bytes = families.get('roundwire_bytes_total')!.metrics;
    const clientLabels = new Set(bytes.map((m) => m.labels!.client));
    expect(clientLabels.size).toBe(CLIENT_LABELS_MAX + 1);
    expect(clientLabels.has('other')).toBe(true);
    let expectedOtherUpPayload = 0;
    for (let id = CLIENT_LABELS_MAX; id < clientCount; id++)
      expectedOtherUpPayload += totals[String(id)].up.payload;
    const other = bytes.find(
      (m) =>
        m.labels!.client === 'other' &&
        m.labels!.direction === 'up' &&
        m.labels!.layer === 'payload',
    )!;
    expect(Number(other.value)).toBe(expectedOtherUpPayload);

    const compute = families.get('roundwire_client_compute_seconds_total')!.metrics;
    expect(compute.map((m) => [m.labels!.client, Number(m.value)])).toEqual([
      ['0', 0.25],
      ['other', 0.5],
    ]);
    const dropped = families.get('roundwire_dropped_updates_total')!.metrics;
    expect(dropped).toHaveLength(CLIENT_LABELS_MAX + 1);
    expect(Number(dropped.find((m) => m.labels!.client === 'other')!.value)).toBe(1);
    const errors = families.get('roundwire_protocol_errors_total')!.metrics;
    expect(
      errors.find((m) => m.labels!.code === 'E_DIMENSION' && m.labels!.origin === 'received')!
        .value,
    ).toBe('2');
    expect(
      errors.find((m) => m.labels!.code === 'E_FRAME_MASK' && m.labels!.origin === 'frame')!.value,
    ).toBe('3');
    // No prediction and too short a curve for a fit: NaN, not a made-up number.
    expect(families.get('roundwire_rate_predicted')!.metrics[0].value).toBe('Nan');
    expect(families.get('roundwire_rate_measured')!.metrics[0].value).toBe('Nan');
    expect(families.get('roundwire_workers_connected')!.metrics[0].value).toBe('2');
    expect(families.get('roundwire_run_info')!.metrics).toEqual([
      { labels: { method: 'scaffold' }, value: '1' },
    ]);
  });
});
