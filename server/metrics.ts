// The coordinator's Prometheus metrics (DESIGN.md, Metrics) on a registry of their own. Round
// figures are pushed when a round ends; figures the coordinator already keeps (bytes in the
// ledger, protocol errors, workers) are read when a scraper asks, so the hot path pays nothing
// for them. The measured rate is fitted to the curve so far at scrape time, and the predicted
// rate is computed at the first scrape that needs it: a run nobody scrapes never pays for either.

import { Counter, Gauge, Histogram, Registry } from 'prom-client';
import { FRAME_ERROR_REASONS, PROTOCOL_ERROR_CODES } from '../src/protocol/index.js';
import type { MethodName } from '../src/algorithm/method.js';
import type { ClientRoundRecord, HeldOutRecord, RoundRecord } from '../src/engine/round-record.js';
import { fitLinearRate } from '../src/theory/measure-curve.js';
import type { ByteLedger } from './byte-ledger.js';
import { LIMIT_REASONS } from './limit-reasons.js';
import type { ProtocolErrorCounts } from './protocol-error-counter.js';
import { CLIENT_LABELS_MAX, clientLabel } from './metrics-labels.js';
import { LiveCurve } from './live-curve.js';

/** What the metrics read from the coordinator at scrape time. */
export interface CoordinatorMetricsSources {
  ledger: Pick<ByteLedger, 'clientTotals' | 'controlTotals'>;
  /** the round in progress (0 before the first) */
  currentRound: () => number;
  /** workers past the handshake whose connection is open */
  connectedWorkers: () => number;
  lostWorkers: () => number;
  protocolErrors: () => ProtocolErrorCounts;
  /** clients of the plan: each gets its dropped-updates series at 0 from the start */
  clientCount: number;
  /** f* of the problem, for the noise level of the rate fit */
  optimumLoss: number;
  /** the theory's per-round rate, or null where it predicts none; called at most once */
  predictedRate: () => number | null;
  /** the run's method, for roundwire_run_info */
  method: MethodName;
}

/** Round durations from a millisecond (a virtual round of a small problem) to five minutes. */
export const ROUND_DURATION_BUCKETS_SECONDS = [
  0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30, 60, 120, 300,
];

const LAYERS = ['payload', 'encoded', 'wire'] as const;
const DIRECTIONS = ['up', 'down'] as const;
const ERROR_ORIGINS = ['received', 'reported'] as const;

export class CoordinatorMetrics {
  readonly registry = new Registry();
  private readonly sources: CoordinatorMetricsSources;
  /** the evaluated points for the measured rate, in bounded memory (live-curve.ts) */
  private readonly curve = new LiveCurve();
  private lastWallSeconds = 0;
  private predicted: number | null | undefined = undefined;
  private measuredFor = -1;
  private measured = Number.NaN;
  private readonly roundsCompleted: Counter;
  private readonly suboptimality: Gauge;
  private readonly suboptimalityInitial: Gauge;
  private readonly suboptimalityPredicted: Gauge;
  private readonly distance: Gauge;
  private readonly testLoss: Gauge;
  private readonly testAccuracy: Gauge;
  /** per-client test accuracy by summary: mean, worst, range (best minus worst) */
  private readonly testAccuracyClients: Gauge<'summary'>;
  private readonly roundDuration: Histogram<'clock'>;
  private readonly computeSeconds: Counter<'client'>;
  private readonly idleSeconds: Counter<'client'>;
  private readonly upStreamSeconds: Counter<'client'>;
  private readonly localSteps: Counter<'client'>;
  private readonly localStepsLast: Gauge<'client'>;
  private readonly dropped: Counter<'client'>;

  constructor(sources: CoordinatorMetricsSources) {
    this.sources = sources;
    const registers = [this.registry];
    // prom-client calls collect() with the gauge as `this`, so the rates are bound here.
    const predictedRate = () => this.predictedRate();
    const measuredRate = () => this.measuredRate();
    // An info series (value 1): queries join it on the target to label and colour series by method.
    new Gauge({
      name: 'roundwire_run_info',
      help: "Always 1; the method label names the run's method.",
      labelNames: ['method'],
      registers,
    }).set({ method: sources.method }, 1);
    this.roundsCompleted = new Counter({
      name: 'roundwire_rounds_completed_total',
      help: 'Rounds completed.',
      registers,
    });
    new Gauge({
      name: 'roundwire_round_current',
      help: 'The round in progress (0 before the first).',
      registers,
      collect() {
        this.set(sources.currentRound());
      },
    });
    this.suboptimality = new Gauge({
      name: 'roundwire_suboptimality',
      help: 'f(x) - f* at the last evaluated round.',
      registers,
    });
    this.suboptimalityInitial = new Gauge({
      name: 'roundwire_suboptimality_initial',
      help: 'f(x0) - f* of the initial model.',
      registers,
    });
    this.suboptimalityPredicted = new Gauge({
      name: 'roundwire_suboptimality_predicted',
      help: 'f - f* the theory predicts at the last evaluated round: the ideal round map iterated from x0 (NaN where it predicts none).',
      registers,
    });
    this.suboptimalityPredicted.set(Number.NaN);
    this.distance = new Gauge({
      name: 'roundwire_distance_to_optimum',
      help: '||x - x*|| at the last evaluated round.',
      registers,
    });
    // NaN until a round scores the test parts, and for good where none is held out.
    this.testLoss = new Gauge({
      name: 'roundwire_test_loss',
      help: 'Mean loss (no L2 term) over the pooled held-out test rows at the last evaluated round.',
      registers,
    });
    this.testLoss.set(Number.NaN);
    this.testAccuracy = new Gauge({
      name: 'roundwire_test_accuracy_ratio',
      help: 'Share of the pooled held-out test rows labelled right at the last evaluated round (classifiers).',
      registers,
    });
    this.testAccuracy.set(Number.NaN);
    this.testAccuracyClients = new Gauge({
      name: 'roundwire_client_test_accuracy_ratio',
      help: "Each client's own test accuracy at the last evaluated round, summarised over the clients: mean, worst, or range (best minus worst).",
      labelNames: ['summary'],
      registers,
    });
    for (const summary of ['mean', 'worst', 'range'])
      this.testAccuracyClients.set({ summary }, Number.NaN);
    new Gauge({
      name: 'roundwire_rate_predicted',
      help: "The theory's per-round contraction of f - f* (NaN where it predicts none).",
      registers,
      collect() {
        this.set(predictedRate());
      },
    });
    new Gauge({
      name: 'roundwire_rate_measured',
      help: 'Per-round contraction of f - f* fitted to the curve so far (NaN until it can be fitted).',
      registers,
      collect() {
        this.set(measuredRate());
      },
    });
    new Counter({
      name: 'roundwire_bytes_total',
      help: 'Round traffic (down and up messages) by direction, layer (payload, encoded, wire) and client.',
      labelNames: ['direction', 'layer', 'client'],
      registers,
      collect() {
        this.reset();
        for (const [id, entry] of Object.entries(sources.ledger.clientTotals())) {
          const client = clientLabel(Number(id));
          for (const direction of DIRECTIONS)
            for (const layer of LAYERS)
              this.inc({ direction, layer, client }, entry[direction][layer]);
        }
      },
    });
    new Counter({
      name: 'roundwire_control_bytes_total',
      help: 'Handshake, heartbeat, error and done traffic by direction and layer (encoded, wire).',
      labelNames: ['direction', 'layer'],
      registers,
      collect() {
        this.reset();
        const control = sources.ledger.controlTotals();
        for (const direction of DIRECTIONS)
          for (const layer of ['encoded', 'wire'] as const)
            this.inc({ direction, layer }, control[layer][direction]);
      },
    });
    this.roundDuration = new Histogram({
      name: 'roundwire_round_duration_seconds',
      help: 'Length of each round: as the wall clock measured it, and as the timing models account it.',
      labelNames: ['clock'],
      buckets: ROUND_DURATION_BUCKETS_SECONDS,
      registers,
    });
    this.computeSeconds = new Counter({
      name: 'roundwire_client_compute_seconds_total',
      help: 'Seconds each client spent on local work.',
      labelNames: ['client'],
      registers,
    });
    this.idleSeconds = new Counter({
      name: 'roundwire_client_idle_seconds_total',
      help: 'Seconds each client waited for the round to close after its update.',
      labelNames: ['client'],
      registers,
    });
    this.upStreamSeconds = new Counter({
      name: 'roundwire_client_up_stream_seconds_total',
      help: "Wall clock: seconds the ups frames carrying each client's updates took to arrive at the coordinator, first byte to last.",
      labelNames: ['client'],
      registers,
    });
    this.localSteps = new Counter({
      name: 'roundwire_client_local_steps_total',
      help: 'Local steps each client took.',
      labelNames: ['client'],
      registers,
    });
    this.localStepsLast = new Gauge({
      name: 'roundwire_client_local_steps_last',
      help: 'Local steps tau_i each client took in its last round.',
      labelNames: ['client'],
      registers,
    });
    new Gauge({
      name: 'roundwire_workers_connected',
      help: 'Workers past the handshake with an open connection.',
      registers,
      collect() {
        this.set(sources.connectedWorkers());
      },
    });
    this.dropped = new Counter({
      name: 'roundwire_dropped_updates_total',
      help: 'Updates that did not count (late, beyond fastest-k, or lost), by client.',
      labelNames: ['client'],
      registers,
    });
    // A run with no drops still shows a flat zero per client rather than no data.
    for (let id = 0; id < Math.min(sources.clientCount, CLIENT_LABELS_MAX + 1); id++)
      this.dropped.inc({ client: clientLabel(id) }, 0);
    new Counter({
      name: 'roundwire_protocol_errors_total',
      help: 'Protocol errors by code: bad messages received from workers, errors workers reported, connections closed for a malformed WebSocket frame (origin "frame") and for passing a connection limit (origin "limit").',
      labelNames: ['code', 'origin'],
      registers,
      collect() {
        this.reset();
        const counts = sources.protocolErrors();
        for (const origin of ERROR_ORIGINS)
          for (const code of PROTOCOL_ERROR_CODES)
            this.inc({ code, origin }, counts[origin][code] ?? 0);
        for (const reason of FRAME_ERROR_REASONS)
          this.inc({ code: reason, origin: 'frame' }, counts.frame[reason] ?? 0);
        for (const reason of LIMIT_REASONS)
          this.inc({ code: reason, origin: 'limit' }, counts.limit[reason] ?? 0);
      },
    });
    new Counter({
      name: 'roundwire_workers_lost_total',
      help: 'Workers lost during the run (closed connection or silence).',
      registers,
      collect() {
        this.reset();
        this.inc(sources.lostWorkers());
      },
    });
  }

  /** A finished round with its clients' records; round 0 is the initial evaluation. */
  private heldOutRecorded(heldOut: HeldOutRecord): void {
    this.testLoss.set(heldOut.loss ?? Number.NaN);
    this.testAccuracy.set(heldOut.accuracy ?? Number.NaN);
    const clients = heldOut.clientAccuracy;
    this.testAccuracyClients.set({ summary: 'mean' }, clients?.mean ?? Number.NaN);
    this.testAccuracyClients.set({ summary: 'worst' }, clients?.worst ?? Number.NaN);
    this.testAccuracyClients.set({ summary: 'range' }, clients?.range ?? Number.NaN);
  }

  roundRecorded(record: RoundRecord, clients: readonly ClientRoundRecord[]): void {
    if (record.suboptimality !== null) {
      this.curve.add(record.round, record.suboptimality);
      this.suboptimality.set(record.suboptimality);
    }
    if (record.distance !== null) this.distance.set(record.distance);
    if (record.heldOut !== undefined) this.heldOutRecorded(record.heldOut);
    if (record.suboptimality !== null)
      this.suboptimalityPredicted.set(record.predictedSuboptimality ?? Number.NaN);
    if (record.round === 0) {
      if (record.suboptimality !== null) this.suboptimalityInitial.set(record.suboptimality);
      this.lastWallSeconds = record.wallSeconds;
      return;
    }
    this.roundsCompleted.inc();
    this.roundDuration.observe(
      { clock: 'wall' },
      Math.max(0, record.wallSeconds - this.lastWallSeconds),
    );
    this.roundDuration.observe({ clock: 'modelled' }, record.roundSeconds);
    this.lastWallSeconds = record.wallSeconds;
    for (const c of clients) {
      const client = clientLabel(c.clientId);
      this.computeSeconds.inc({ client }, c.computeSeconds);
      this.idleSeconds.inc({ client }, c.waitSeconds);
      if (c.upStreamSeconds !== undefined) this.upStreamSeconds.inc({ client }, c.upStreamSeconds);
    }
    for (const [id, steps] of Object.entries(record.localSteps)) {
      const client = clientLabel(Number(id));
      this.localSteps.inc({ client }, steps);
      this.localStepsLast.set({ client }, steps);
    }
    for (const id of record.dropped) this.dropped.inc({ client: clientLabel(id) });
  }

  private predictedRate(): number {
    if (this.predicted === undefined) this.predicted = this.sources.predictedRate();
    return this.predicted ?? Number.NaN;
  }

  /** The summary's fit (src/engine/run-summary.ts) on the curve so far. */
  private measuredRate(): number {
    if (this.curve.count() === this.measuredFor) return this.measured;
    this.measuredFor = this.curve.count();
    const curve = this.curve.points();
    if (curve.length < 2) return (this.measured = Number.NaN);
    // As the summary: f is evaluated to a few ulps of its scale; below that the curve is noise.
    const noiseLevel =
      1e3 * Number.EPSILON * Math.max(Math.abs(this.sources.optimumLoss), curve[0].suboptimality);
    const fit = fitLinearRate(curve, { noiseLevel });
    return (this.measured = fit === null ? Number.NaN : fit.rate);
  }
}
