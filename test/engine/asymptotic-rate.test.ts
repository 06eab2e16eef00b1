// The acceptance lines for rates, with nothing injected, on every bundled least-squares
// scenario and every method: the measured rate and the predicted trajectory's rate over the same
// window agree to |log ratio - 1| <= 0.01; where the run reaches its asymptotic window the
// measured rate agrees with the predicted asymptotic rate to <= 0.05; where it does not, the
// status says so. Both branches must occur among the runs.

import { describe, expect, it } from 'vitest';
import { bundledLeastSquaresScenarios } from '../support/bundled-scenarios.js';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';
import { runInProcess } from '../../src/engine/in-process-engine.js';
import { predictRun } from '../../src/engine/predict-run.js';
import { buildRunSummary } from '../../src/engine/run-summary.js';
import type { RoundRecord } from '../../src/engine/round-record.js';

const METHODS = ['gd', 'fedavg', 'fedprox', 'fednova', 'scaffold', 'fedlin', 'fedsplit'] as const;
/** the bounds */
const SAME_WINDOW = 0.01;
const ASYMPTOTIC = 0.05;

const leastSquaresScenarios = bundledLeastSquaresScenarios();

const logRatio = (rate: number, reference: number) =>
  Math.abs(Math.log(rate) / Math.log(reference) - 1);

function summaryOf(path: string, method: string) {
  // Nothing injected: dense f64 messages both ways; the scenario's own run length.
  const scenario = loadScenarioFile(path, [
    `method.name:${method}`,
    'run.target:0',
    'compression.uplink.default:{kind: none}',
    'compression.downlink.default:{kind: none}',
  ]);
  const records: RoundRecord[] = [];
  const outcome = runInProcess(scenario, { onRound: (record) => records.push(record) });
  return buildRunSummary(outcome, records, predictRun(outcome.plan, outcome.theory), 'in-process');
}

const statuses = new Set<string>();

describe('measured beside predicted over the asymptotic window, nothing injected', () => {
  it('covers every bundled least-squares scenario of ordinary size', () => {
    expect(leastSquaresScenarios.length).toBeGreaterThanOrEqual(5);
  });

  for (const path of leastSquaresScenarios) {
    for (const method of METHODS) {
      it(`${path}, ${method}`, () => {
        const summary = summaryOf(path, method);
        const a = summary.rate.asymptotic;
        statuses.add(a.status);
        if (a.status === 'no-prediction') {
          expect(summary.prediction.available).toBe(false);
          return;
        }
        expect(a.window).not.toBeNull();
        expect(logRatio(a.measured!, a.predictedOverWindow!)).toBeLessThanOrEqual(SAME_WINDOW);
        if (a.status === 'asymptotic') {
          expect(logRatio(a.measured!, summary.rate.predicted!)).toBeLessThanOrEqual(ASYMPTOTIC);
          expect(a.window![0]).toBeGreaterThanOrEqual(a.asymptoticRound!);
        } else if (a.status === 'not-yet-asymptotic') {
          expect(a.note).toBe(`not yet asymptotic (needs about ${a.roundsNeeded} rounds)`);
          expect(summary.rounds).toBeLessThan(a.roundsNeeded!);
        } else {
          expect(a.note).toMatch(/^no clean window/);
        }
      }, 60_000);
    }
  }

  it('meets both branches: asymptotic somewhere, not yet asymptotic somewhere', () => {
    expect(statuses).toContain('asymptotic');
    expect(statuses).toContain('not-yet-asymptotic');
  });
});
