// The scale suite of `npm run bench -- --suite scale`: production-like sizes run for real, each
// scenario once in process and once distributed (a coordinator and 2 local worker processes),
// virtual clock, through the compiled CLI (scale-run.ts measures one run). Per scenario it
// reports setup seconds and rounds per second of both runtimes (distributed beside in process,
// with their ratio) and peak RSS: the in-process run's, and the distributed run's as the sum of
// its processes, by process. A scenario whose total time matters is let finish, and its total
// seconds are reported too. Each figure that has a target carries it (bench-report.ts).
//
// Targets are those of the scale work (issue 11); the memory target is the project's own limit
// on a run (RUN_MEMORY_MIB_MAX). Checkpoints are off: they are not a round's cost.

import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { RUN_MEMORY_MIB_MAX } from '../../src/engine/memory-estimate.js';
import { benchTarget, type BenchResult } from './bench-report.js';
import { measureScaleRun, type ScaleRunMeasures } from './scale-run.js';

export interface ScaleScenario {
  /** a short label, the case's prefix */
  label: string;
  problem: 'least-squares' | 'logistic';
  clients: number;
  features: number;
  samplesPerClient: number;
  method: 'fedavg' | 'fedlin';
  localSteps: number;
  rounds: number;
  /** let both runs finish and report their total seconds */
  totalSeconds: boolean;
  targets: {
    distributedRoundsPerSecondMin?: number;
    distributedPeakResidentMiBMax?: number;
    inProcessTotalSecondsMax?: number;
    /** distributed total seconds / in-process total seconds */
    totalSecondsRatioMax?: number;
  };
}

/** Rounds per case: enough for a steady rate, few enough that the suite takes minutes. */
export const FULL_SCALE_SCENARIOS: ScaleScenario[] = [
  {
    label: 'many clients, d = 1,000',
    problem: 'least-squares',
    clients: 1_000,
    features: 1_000,
    samplesPerClient: 20,
    method: 'fedavg',
    localSteps: 1,
    rounds: 30,
    totalSeconds: false,
    targets: { distributedRoundsPerSecondMin: 5 },
  },
  {
    label: 'most clients, d = 100',
    problem: 'least-squares',
    clients: 10_000,
    features: 100,
    samplesPerClient: 20,
    method: 'fedavg',
    localSteps: 1,
    rounds: 20,
    totalSeconds: false,
    targets: {
      distributedRoundsPerSecondMin: 1,
      distributedPeakResidentMiBMax: RUN_MEMORY_MIB_MAX,
    },
  },
  {
    label: 'wide model, d = 20,000',
    problem: 'least-squares',
    clients: 8,
    features: 20_000,
    samplesPerClient: 500,
    method: 'fedavg',
    localSteps: 1,
    rounds: 20,
    totalSeconds: false,
    targets: {},
  },
  {
    label: 'logistic FedLin',
    problem: 'logistic',
    clients: 8,
    features: 500,
    samplesPerClient: 4_000,
    method: 'fedlin',
    localSteps: 10,
    rounds: 30,
    totalSeconds: true,
    targets: { inProcessTotalSecondsMax: 30, totalSecondsRatioMax: 1.3 },
  },
];

/** Longest one run may take before the suite gives up on it. */
const RUN_SECONDS_MAX = 900;
const MIB_BYTES = 1024 * 1024;

export function scaleScenarioText(s: ScaleScenario): string {
  return [
    `name: bench-scale`,
    'seed: 11',
    `problem: {kind: ${s.problem}, regularization: 0.001}`,
    `data: {source: synthetic, features: ${s.features}, samplesPerClient: ${s.samplesPerClient}, minimizerSpread: 1.0, conditionNumber: 10, noise: 0.1}`,
    `clients: {count: ${s.clients}}`,
    `method: {name: ${s.method}, localSteps: ${s.localSteps}}`,
    'timing: {clock: virtual}',
    `run: {rounds: ${s.rounds}, target: 0, workers: 2, checkpointEveryRounds: 0}`,
    '',
  ].join('\n');
}

function shapeOf(s: ScaleScenario): BenchResult['shape'] {
  return {
    problem: s.problem,
    clients: s.clients,
    d: s.features,
    samplesPerClient: s.samplesPerClient,
    method: s.method,
    localSteps: s.localSteps,
    rounds: s.rounds,
    workers: 2,
    clock: 'virtual',
  };
}

/** Peak RSS by process in MiB: the coordinator and its workers, or the one in-process run. */
function peakParts(m: ScaleRunMeasures, rootName: string): Record<string, number> {
  const parts: Record<string, number> = { [rootName]: m.root.peakResidentBytes / MIB_BYTES };
  m.children.forEach((c, i) => {
    parts[`worker ${i + 1}`] = c.peakResidentBytes / MIB_BYTES;
  });
  return parts;
}

const sumOf = (parts: Record<string, number>) => Object.values(parts).reduce((a, b) => a + b, 0);

function resultsOf(
  s: ScaleScenario,
  inProcess: ScaleRunMeasures,
  distributed: ScaleRunMeasures,
): BenchResult[] {
  const shape = shapeOf(s);
  const base = { suite: 'scale', shape } as const;
  const { targets } = s;
  const roundsRatio = distributed.roundsPerSecond / inProcess.roundsPerSecond;
  const inProcessParts = peakParts(inProcess, 'in process');
  const distributedParts = peakParts(distributed, 'coordinator');
  const distributedPeak = sumOf(distributedParts);
  const results: BenchResult[] = [
    {
      ...base,
      case: `${s.label}: setup in process`,
      figure: inProcess.setupSeconds,
      unit: 's',
      better: 'lower',
    },
    {
      ...base,
      case: `${s.label}: setup distributed`,
      figure: distributed.setupSeconds,
      unit: 's',
      better: 'lower',
    },
    {
      ...base,
      case: `${s.label}: rounds per second in process`,
      figure: inProcess.roundsPerSecond,
      unit: 'rounds/s',
    },
    {
      ...base,
      case: `${s.label}: rounds per second distributed`,
      figure: distributed.roundsPerSecond,
      unit: 'rounds/s',
      reference: { against: 'in process', figure: inProcess.roundsPerSecond, ratio: roundsRatio },
      ...(targets.distributedRoundsPerSecondMin === undefined
        ? {}
        : {
            target: benchTarget(
              'figure',
              targets.distributedRoundsPerSecondMin,
              'rounds/s',
              distributed.roundsPerSecond,
              undefined,
            ),
          }),
    },
    {
      ...base,
      case: `${s.label}: peak RSS in process`,
      figure: sumOf(inProcessParts),
      unit: 'MiB',
      better: 'lower',
      parts: inProcessParts,
    },
    {
      ...base,
      case: `${s.label}: peak RSS distributed, all processes`,
      figure: distributedPeak,
      unit: 'MiB',
      better: 'lower',
      parts: distributedParts,
      ...(targets.distributedPeakResidentMiBMax === undefined
        ? {}
        : {
            target: benchTarget(
              'figure',
              targets.distributedPeakResidentMiBMax,
              'MiB',
              distributedPeak,
              'lower',
            ),
          }),
    },
  ];
  if (s.totalSeconds) {
    const inProcessTotal = inProcess.totalSeconds!;
    const distributedTotal = distributed.totalSeconds!;
    const ratio = distributedTotal / inProcessTotal;
    results.push(
      {
        ...base,
        case: `${s.label}: total seconds in process`,
        figure: inProcessTotal,
        unit: 's',
        better: 'lower',
        ...(targets.inProcessTotalSecondsMax === undefined
          ? {}
          : {
              target: benchTarget(
                'figure',
                targets.inProcessTotalSecondsMax,
                's',
                inProcessTotal,
                'lower',
              ),
            }),
      },
      {
        ...base,
        case: `${s.label}: total seconds distributed`,
        figure: distributedTotal,
        unit: 's',
        better: 'lower',
        reference: { against: 'in process', figure: inProcessTotal, ratio },
        ...(targets.totalSecondsRatioMax === undefined
          ? {}
          : { target: benchTarget('ratio', targets.totalSecondsRatioMax, 'x', ratio, 'lower') }),
      },
    );
  }
  return results;
}

/** Runs every scenario in process, then distributed, one run at a time. */
export async function runScaleBench(
  scenarios: readonly ScaleScenario[] = FULL_SCALE_SCENARIOS,
): Promise<BenchResult[]> {
  const folder = mkdtempSync(join(tmpdir(), 'roundwire-bench-scale-scenarios-'));
  const results: BenchResult[] = [];
  try {
    for (const [i, s] of scenarios.entries()) {
      const scenarioPath = join(folder, `scale-${i + 1}.yaml`);
      writeFileSync(scenarioPath, scaleScenarioText(s));
      const spec = {
        scenarioPath,
        rounds: s.rounds,
        untilExit: s.totalSeconds,
        secondsMax: RUN_SECONDS_MAX,
      };
      const inProcess = await measureScaleRun({ ...spec, runtime: 'in-process' });
      const distributed = await measureScaleRun({ ...spec, runtime: 'distributed' });
      results.push(...resultsOf(s, inProcess, distributed));
    }
  } finally {
    rmSync(folder, { recursive: true, force: true });
  }
  return results;
}
