// The oracle's part of `npm run bench`: the seconds a cold setup takes (no disk cache), for the
// `theory` report on many small least-squares clients and for an in-process logistic run whose
// setup used to be dominated by dense Hessians. Seconds, lower is better; one run each, since a
// setup is long enough to time on its own.

import { performance } from 'node:perf_hooks';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { useTheoryStore } from '../../src/theory/plan-theory.js';
import { theoryReport } from '../../src/commands/theory-command.js';
import { planFor, runInProcess } from '../../src/engine/in-process-engine.js';
import { predictRun } from '../../src/engine/predict-run.js';
import type { BenchResult } from './bench-report.js';

export interface OracleBenchSizes {
  theory: { clients: number; features: number; samples: number };
  logistic: { clients: number; features: number; samples: number; rounds: number };
}

export const FULL_ORACLE_SIZES: OracleBenchSizes = {
  theory: { clients: 1_000, features: 1_000, samples: 20 },
  logistic: { clients: 8, features: 500, samples: 4_000, rounds: 30 },
};

function scenario(
  kind: string,
  sizes: { clients: number; features: number; samples: number },
  method: string,
  rounds: number,
) {
  const text = [
    `name: bench-${kind}`,
    'seed: 11',
    `problem: {kind: ${kind}, regularization: 0.001}`,
    `data: {source: synthetic, features: ${sizes.features}, samplesPerClient: ${sizes.samples}, minimizerSpread: 1.0, conditionNumber: 10, noise: 0.1}`,
    `clients: {count: ${sizes.clients}}`,
    `method: ${method}`,
    `run: {rounds: ${rounds}, target: 0}`,
  ].join('\n');
  return scenarioFromText(text, `bench-${kind}.yaml`, []);
}

const seconds = (startedMs: number) => (performance.now() - startedMs) / 1000;

export async function runOracleBench(
  sizes: OracleBenchSizes = FULL_ORACLE_SIZES,
): Promise<BenchResult[]> {
  useTheoryStore(null);
  const results: BenchResult[] = [];
  const { theory, logistic } = sizes;

  const theoryScenario = scenario('least-squares', theory, '{name: fedavg, localSteps: 1}', 1);
  let started = performance.now();
  await theoryReport(theoryScenario);
  results.push({
    suite: 'oracle',
    case: 'theory setup least-squares',
    shape: { clients: theory.clients, d: theory.features, samplesPerClient: theory.samples },
    figure: seconds(started),
    unit: 's',
    better: 'lower',
  });

  const runScenario = scenario(
    'logistic',
    logistic,
    '{name: fedlin, localSteps: 10}',
    logistic.rounds,
  );
  started = performance.now();
  planFor(runScenario);
  const setupSeconds = seconds(started);
  const outcome = runInProcess(runScenario);
  predictRun(outcome.plan, outcome.theory);
  const shape = {
    clients: logistic.clients,
    d: logistic.features,
    samplesPerClient: logistic.samples,
    method: 'fedlin',
    localSteps: 10,
    rounds: logistic.rounds,
  };
  results.push({
    suite: 'oracle',
    case: 'run setup logistic',
    shape,
    figure: setupSeconds,
    unit: 's',
    better: 'lower',
  });
  results.push({
    suite: 'oracle',
    case: 'run in process total logistic',
    shape,
    figure: seconds(started),
    unit: 's',
    better: 'lower',
  });
  return results;
}
