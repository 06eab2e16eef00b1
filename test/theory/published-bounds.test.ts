// Published rate bounds: their values from L and mu computed here with ml-matrix, each bound
// against the exact prediction and against a measured in-process run, the conditions that fail
// reported as such, and a source with a theorem number on every bound.
import { describe, expect, it } from 'vitest';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import type { Scenario } from '../../src/scenario/schema.js';
import { runInProcess } from '../../src/engine/in-process-engine.js';
import { buildRunSummary, runSummarySchema } from '../../src/engine/run-summary.js';
import { predictRun } from '../../src/engine/predict-run.js';
import { buildAllShards } from '../../src/data/build-shard.js';
import {
  boundInputsFor,
  publishedBounds,
  type PublishedBound,
} from '../../src/theory/published-bounds.js';
import { formatRunSummary } from '../../src/commands/run-report.js';
import { RecordList } from '../support/record-list.js';

const base = `
name: bounds-test
seed: 23
problem: {kind: least-squares, regularization: 0.05}
data: {source: synthetic, features: 6, samplesPerClient: {uniform: [20, 40]}, minimizerSpread: 1.0, conditionNumber: 5, noise: 0.1}
clients: {count: 4}
method: {name: gd}
run: {rounds: 60, target: 0}
`;

function scenario(tweaks: string[] = []): Scenario {
  return scenarioFromText(base, 'bounds-test.yaml', tweaks);
}

/**
 * mu and L of f = sum_i p_i f_i, p_i = n_i/n: the extreme eigenvalues of its Hessian
 * sum_i p_i (A_i^T A_i / n_i + lambda I), formed and decomposed with ml-matrix.
 */
function curvatureOf(s: Scenario): { mu: number; L: number } {
  const shards = buildAllShards(s);
  const n = shards.reduce((sum, shard) => sum + shard.sampleCount, 0);
  const d = shards[0].featureCount;
  let hessian = Matrix.eye(d).mul(s.problem.regularization);
  for (const shard of shards) {
    const a = new Matrix(shard.sampleCount, d);
    for (let r = 0; r < shard.sampleCount; r++)
      for (let c = 0; c < d; c++) a.set(r, c, shard.features[r * d + c]);
    hessian = hessian.add(a.transpose().mmul(a).div(n));
  }
  const eigenvalues = new EigenvalueDecomposition(hessian).realEigenvalues;
  return { mu: Math.min(...eigenvalues), L: Math.max(...eigenvalues) };
}

function runWithSummary(s: Scenario) {
  const records = new RecordList();
  const outcome = runInProcess(s, { openRecords: () => records });
  const prediction = predictRun(outcome.plan, outcome.theory);
  const summary = buildRunSummary(outcome, records.rounds, prediction, 'in-process');
  return { outcome, summary, rounds: records.rounds };
}

function byLabel(bounds: readonly PublishedBound[], fragment: string): PublishedBound {
  const found = bounds.find((b) => b.label.includes(fragment));
  if (found === undefined) throw new Error(`no bound labelled like "${fragment}"`);
  return found;
}

const KARIMI = 'step 1/L: f - f*';
const NESTEROV = 'step in (0, 2/(mu + L)]';

/** Rounding slack for comparing f - f* and ||x - x*||^2 of a run with a bound (common practice). */
const ROUNDING_RELATIVE = 1e-9;

describe('gradient descent with step 1/L on strongly convex least squares', () => {
  const s = scenario();
  const { mu, L } = curvatureOf(s);
  const { summary, rounds } = runWithSummary(s);

  it('gives each bound the value its theorem states, from L and mu computed with ml-matrix', () => {
    // Karimi, Nutini and Schmidt, ECML PKDD 2016, Theorem 1: 1 - mu/L on f - f*.
    expect(byLabel(summary.bounds, KARIMI).ratePerRound).toBeCloseTo(1 - mu / L, 9);
    // Nesterov 2004, Theorem 2.1.15 with h = 1/L: 1 - 2 h mu L/(mu + L) on ||x - x*||^2.
    expect(byLabel(summary.bounds, NESTEROV).ratePerRound).toBeCloseTo(
      1 - (2 * (1 / L) * mu * L) / (mu + L),
      9,
    );
    for (const b of summary.bounds) expect(b.status).toBe('applies');
  });

  it('puts every bound at or above the exact predicted rate', () => {
    expect(summary.rate.predicted).not.toBeNull();
    for (const b of summary.bounds)
      expect(b.suboptimalityRatePerRound as number).toBeGreaterThanOrEqual(
        summary.rate.predicted as number,
      );
  });

  it('holds round by round on the measured run: f - f* for Theorem 1, ||x - x*||^2 for Theorem 2.1.15', () => {
    const q = byLabel(summary.bounds, KARIMI).ratePerRound as number;
    const gaps = rounds.map((r) => r.suboptimality as number);
    const scale = gaps[0];
    let checked = 0;
    for (let k = 1; k < gaps.length; k++) {
      // below 1e-9 of the initial gap, f - f* is within a few thousand ulps of f*: rounding
      if (gaps[k - 1] < 1e-9 * scale) break;
      expect(gaps[k]).toBeLessThanOrEqual(q * gaps[k - 1] + ROUNDING_RELATIVE * scale * 1e-3);
      checked++;
    }
    expect(checked).toBeGreaterThan(20);
    const distances = rounds.map((r) => (r.distance as number) ** 2);
    const rate = byLabel(summary.bounds, NESTEROV).ratePerRound as number;
    distances.forEach((dist, k) =>
      expect(dist).toBeLessThanOrEqual(rate ** k * distances[0] * (1 + ROUNDING_RELATIVE) + 1e-24),
    );
    expect(summary.rate.measured).not.toBeNull();
    for (const b of summary.bounds)
      expect(b.suboptimalityRatePerRound as number).toBeGreaterThanOrEqual(
        summary.rate.measured as number,
      );
  });

  it('cites a theorem for every bound, keeps the bounds in outcome.json and prints them', () => {
    expect(summary.bounds).toHaveLength(2);
    for (const b of summary.bounds) {
      expect(b.source).toMatch(/Theorem \d+(\.\d+)*/);
      expect(b.provenance.length).toBeGreaterThan(0);
    }
    const reread = runSummarySchema.parse(JSON.parse(JSON.stringify(summary)));
    expect(reread.bounds).toEqual(summary.bounds);
    const text = formatRunSummary(summary, '/results');
    expect(text).toContain('Theorem 2.1.15');
    expect(text).toContain('predicted (exact)');
  });
});

describe('gradient descent on L2-logistic regression (a local prediction only: not quadratic)', () => {
  it("still applies both bounds, with the oracle's valid L and mu, and they hold round by round", () => {
    const { summary, rounds } = runWithSummary(
      scenario(['problem.kind:logistic', 'run.rounds:40']),
    );
    expect(summary.prediction.kind).toBe('local');
    const karimi = byLabel(summary.bounds, KARIMI);
    const nesterov = byLabel(summary.bounds, NESTEROV);
    expect([karimi.status, nesterov.status]).toEqual(['applies', 'applies']);
    // A global bound also bounds the local rate near x*.
    expect(karimi.ratePerRound as number).toBeGreaterThanOrEqual(summary.rate.predicted as number);
    const mu = summary.theory.strongConvexity;
    const L = summary.theory.smoothness;
    expect(karimi.ratePerRound).toBeCloseTo(1 - mu / L, 12);
    const gaps = rounds.map((r) => r.suboptimality as number);
    let checked = 0;
    for (let k = 1; k < gaps.length && gaps[k - 1] >= 1e-9 * gaps[0]; k++, checked++)
      expect(gaps[k]).toBeLessThanOrEqual(
        (karimi.ratePerRound as number) * gaps[k - 1] + 1e-12 * gaps[0],
      );
    expect(checked).toBeGreaterThan(5);
    const distances = rounds.map((r) => (r.distance as number) ** 2);
    const q = nesterov.ratePerRound as number;
    distances.forEach((dist, k) =>
      expect(dist).toBeLessThanOrEqual(q ** k * distances[0] * (1 + ROUNDING_RELATIVE) + 1e-24),
    );
  });
});

describe('gradient descent with a step other than 1/L', () => {
  const { mu, L } = curvatureOf(scenario());

  it('applies only Theorem 2.1.15 for a step in (0, 2/(mu + L)] other than 1/L, and it bounds the prediction', () => {
    const h = 1.8 / (mu + L);
    const { summary } = runWithSummary(scenario([`method.stepSize:${h}`]));
    const nesterov = byLabel(summary.bounds, NESTEROV);
    expect(nesterov.status).toBe('applies');
    expect(nesterov.ratePerRound).toBeCloseTo(1 - (2 * h * mu * L) / (mu + L), 9);
    expect(nesterov.ratePerRound as number).toBeGreaterThanOrEqual(
      summary.rate.predicted as number,
    );
    const karimi = byLabel(summary.bounds, KARIMI);
    expect(karimi.status).toBe('does-not-apply');
    expect(karimi.ratePerRound).toBeNull();
    expect(karimi.reason).toMatch(/^does not apply: step h = eta_g eta_i = 1\/L/);
  });

  it('applies none above 2/(mu + L)', () => {
    const s = scenario([`method.stepSize:${2.2 / (mu + L)}`]);
    const bounds = publishedBounds(
      boundInputsFor(
        s,
        { dim: 6, plannedSteps: [1, 1, 1, 1], stepSize: 2.2 / (mu + L) },
        {
          smoothness: L,
          strongConvexity: mu,
        },
      ),
    );
    expect(byLabel(bounds, NESTEROV).reason).toMatch(/^does not apply: step h = .* in \(0, 2/);
    expect(bounds.every((b) => b.status === 'does-not-apply')).toBe(true);
  });
});

/** The bounds for a scenario, with L = 2 and mu = 0.5 and the step 1/L (invented demo values). */
function boundsFor(tweaks: string[], plannedSteps = [1, 1, 1, 1]): PublishedBound[] {
  return publishedBounds(
    boundInputsFor(
      scenario(tweaks),
      { dim: 6, plannedSteps, stepSize: 0.5 },
      {
        smoothness: 2,
        strongConvexity: 0.5,
      },
    ),
  );
}

describe('conditions a run does not meet', () => {
  for (const [what, tweaks, reason] of [
    ['partial participation', ['method.participation:0.5'], 'every client in every round'],
    ['minibatch gradients', ['method.gradient:{minibatch: 4}'], 'full gradients'],
    [
      'top-k compression',
      ['compression.uplink.default:{kind: top-k, fraction: 0.5}'],
      'no compression',
    ],
    ['fastest-k', ['timing.policy:{kind: fastest-k, k: 2}'], 'no update dropped'],
  ] as const) {
    it(`${what}: every gradient descent bound says "does not apply" and why`, () => {
      const bounds = boundsFor([...tweaks]);
      expect(bounds).toHaveLength(2);
      for (const b of bounds) {
        expect(b.status).toBe('does-not-apply');
        expect(b.ratePerRound).toBeNull();
        expect(b.reason).toBe(`does not apply: ${b.conditions.find((c) => c.startsWith(reason))}`);
      }
    });
  }

  it('inverse-steps with unequal tau_i: the clients step with different eta_i', () => {
    const bounds = boundsFor(['method.stepPolicy:inverse-steps'], [1, 2, 3, 4]);
    for (const b of bounds) expect(b.reason).toMatch(/^does not apply: one step size eta_i/);
  });

  it('a zero strong-convexity constant', () => {
    const bounds = publishedBounds(
      boundInputsFor(
        scenario(),
        { dim: 6, plannedSteps: [1, 1, 1, 1], stepSize: 0.5 },
        {
          smoothness: 2,
          strongConvexity: 0,
        },
      ),
    );
    for (const b of bounds)
      expect(b.reason).toMatch(/^does not apply: f is L-smooth and mu-strongly/);
  });
});

describe('the other methods', () => {
  it('fedavg, fedprox and fednova with tau_i = 1 are gradient descent and take its bounds', () => {
    for (const name of ['fedavg', 'fedprox', 'fednova']) {
      const bounds = boundsFor([`method.name:${name}`]);
      expect(bounds.filter((b) => b.status === 'applies')).toHaveLength(2);
    }
  });

  it('fedavg with tau_i = 1 on a run: the bounds lie at or above the prediction', () => {
    const { summary } = runWithSummary(scenario(['method.name:fedavg', 'run.rounds:5']));
    expect(summary.rate.predicted).not.toBeNull();
    for (const b of summary.bounds) {
      expect(b.status).toBe('applies');
      expect(b.suboptimalityRatePerRound as number).toBeGreaterThanOrEqual(
        summary.rate.predicted as number,
      );
    }
  });

  it('fedavg, fedprox and fednova with local steps: no published linear rate to x*, with the reason', () => {
    for (const name of ['fedavg', 'fedprox', 'fednova']) {
      const bounds = boundsFor([`method.name:${name}`, 'method.localSteps:5'], [5, 5, 5, 5]);
      const none = bounds.find((b) => b.status === 'none-published');
      expect(none?.reason).toMatch(/^no published linear rate to the optimum/);
      expect(none?.ratePerRound).toBeNull();
      const gd = bounds.filter((b) => b.status === 'does-not-apply');
      expect(gd).toHaveLength(2);
      for (const b of gd) expect(b.reason).toMatch(/^does not apply: tau_i = 1/);
    }
  });

  it('scaffold, fedlin and fedsplit: left out rather than recalled, with the source named', () => {
    for (const name of ['scaffold', 'fedlin', 'fedsplit']) {
      const bounds = boundsFor([`method.name:${name}`]);
      expect(bounds).toHaveLength(1);
      expect(bounds[0].status).toBe('left-out');
      expect(bounds[0].ratePerRound).toBeNull();
      expect(bounds[0].reason).toMatch(/^left out: /);
      expect(bounds[0].source.length).toBeGreaterThan(0);
    }
    expect(boundsFor(['method.name:fedlin'])[0].source).toContain('FedLin (NeurIPS 2021)');
    expect(boundsFor(['method.name:fedsplit'])[0].reason).toContain('inexactly');
  });
});
