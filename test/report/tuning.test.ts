// Per-variant tuning in `roundwire compare`, in process (candidates and final runs alike), on
// small least-squares scenarios whose answers theory gives.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { stringify } from 'yaml';
import { main } from '../../src/cli.js';
import { planComparison, runComparison } from '../../src/commands/compare-command.js';
import type { Comparison } from '../../src/report/compare-table.js';
import { scenarioFromDocument } from '../../src/scenario/load-scenario.js';
import { theoryOf } from '../../src/theory/plan-theory.js';
import type { TuningTrace } from '../../src/report/tuning-trace.js';

const root = mkdtempSync(join(tmpdir(), 'roundwire-tuning-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));

function scenarioFile(name: string, document: unknown): string {
  const file = join(root, `${name}.yaml`);
  writeFileSync(file, stringify(document));
  return file;
}

function readJson<T>(dir: string, file: string): T {
  return JSON.parse(readFileSync(join(dir, file), 'utf8')) as T;
}

async function compareInProcess(
  file: string,
  name: string,
  options: Parameters<typeof planComparison>[1],
): Promise<{ out: string; c: Comparison; trace: TuningTrace }> {
  const out = join(root, name);
  const plan = planComparison(file, options);
  const c = await runComparison(plan, out, {}, { err: () => {} });
  return { out, c, trace: readJson<TuningTrace>(out, 'tuning.json') };
}

/** One client, gradient descent: the scenario's rounds are plain GD on a ridge least squares. */
const GD_DOCUMENT = {
  name: 'gd-tuning',
  seed: 3,
  problem: { kind: 'least-squares', regularization: 0.01 },
  data: {
    source: 'synthetic',
    features: 10,
    samplesPerClient: 200,
    minimizerSpread: 0,
    conditionNumber: 10,
    noise: 0.1,
  },
  clients: { count: 1 },
  method: { name: 'gd', stepSize: 'auto' },
  // A tight target (common practice: near double precision's reach for f - f* of order 1), so
  // that rounds to it are set by the asymptotic rate, not by the first rounds.
  run: { rounds: 400, target: 1e-12 },
};

describe('tuning the step size of gradient descent', () => {
  const pointsPerDecade = 8;
  let result: Awaited<ReturnType<typeof compareInProcess>>;
  beforeAll(async () => {
    const file = scenarioFile('gd', GD_DOCUMENT);
    result = await compareInProcess(file, 'gd', {
      ladder: ['method.name:gd'],
      tweak: [],
      tune: 'method.stepSize:0.1..10',
      tuneSearch: `grid:${pointsPerDecade}`,
      tuneBudget: '20',
    });
  }, 60_000);

  it('lands within one grid step of 2 / (L + mu)', () => {
    // Rounds to a tight target are about log(target) / log(rho(eta)), and GD's contraction factor
    // on a quadratic, rho(eta) = max(|1 - eta mu|, |1 - eta L|), is least at eta = 2 / (L + mu)
    // (Nesterov, Introductory Lectures on Convex Optimization, Thm 2.1.15). rho falls on one side
    // of that step and rises on the other, so the best grid point is a neighbour of it.
    const theory = theoryOf(scenarioFromDocument(GD_DOCUMENT));
    const { smoothness: L, strongConvexity: mu } = theory.constants;
    const best = 2 / (L + mu);
    const [variant] = result.trace.variants;
    const gridStepDecades = 1 / pointsPerDecade;
    expect(Math.abs(Math.log10(variant.tunedValue / best))).toBeLessThanOrEqual(
      gridStepDecades + 1e-12,
    );
    expect(result.c.variants[0].tunedValue).toBe(variant.tunedValue);
    expect(result.c.variants[0].roundsToTarget).toBe(variant.candidates[variant.best].figure);
  });

  it('records the diverging step sizes as diverged and still picks a finite winner', () => {
    const [variant] = result.trace.variants;
    // Above 2 / L, GD on a quadratic grows along the top eigenvector (Nesterov, Thm 2.1.15's
    // condition 0 < eta < 2 / L), so the grid's top candidates diverge.
    const { smoothness: L } = theoryOf(scenarioFromDocument(GD_DOCUMENT)).constants;
    const above = variant.candidates.filter((c) => c.value > 2 / L);
    expect(above.length).toBeGreaterThan(0);
    for (const c of above) {
      expect(c.diverged).toBe(true);
      expect(c.stop).toBe('diverged');
      expect(c.figure).toBeNull();
    }
    const winner = variant.candidates[variant.best];
    expect(winner.diverged).toBe(false);
    expect(Number.isFinite(winner.figure)).toBe(true);
    expect(result.trace.rankRule).toMatch(/diverged candidates rank last/);
  });
});

describe('golden-section search on the log scale', () => {
  it('brackets 2 / (L + mu) for gradient descent within its budget', async () => {
    const file = scenarioFile('gd-golden', GD_DOCUMENT);
    const budget = 12;
    const { trace } = await compareInProcess(file, 'gd-golden', {
      ladder: ['method.name:gd'],
      tweak: [],
      tune: 'method.stepSize:0.1..10',
      tuneSearch: 'golden',
      tuneBudget: String(budget),
    });
    const [variant] = trace.variants;
    expect(variant.candidates).toHaveLength(budget);
    // Each step keeps 0.618 of the bracket (golden section), so after 12 evaluations the two
    // decades have shrunk to 2 * 0.618^11, about 0.01 decade; rounds are whole numbers, so allow
    // the grid test's 1/8 decade.
    const { smoothness: L, strongConvexity: mu } = theoryOf(
      scenarioFromDocument(GD_DOCUMENT),
    ).constants;
    expect(Math.abs(Math.log10(variant.tunedValue / (2 / (L + mu))))).toBeLessThanOrEqual(1 / 8);
  }, 30_000);
});

describe('a diverging candidate before the others', () => {
  it('is recorded and the search goes on to the finite ones', async () => {
    const file = scenarioFile('gd-list', GD_DOCUMENT);
    // 100 is far above 2 / L (L is about 1 here, `roundwire theory`), so it diverges at once.
    const { trace, c } = await compareInProcess(file, 'gd-list', {
      ladder: ['method.name:gd'],
      tweak: [],
      tune: 'method.stepSize:100/0.5/1',
      tuneBy: 'final-suboptimality',
    });
    const [variant] = trace.variants;
    expect(variant.candidates.map((x) => x.value)).toEqual([100, 0.5, 1]);
    expect(variant.candidates.map((x) => x.diverged)).toEqual([true, false, false]);
    expect(variant.tunedValue).toBe(1);
    expect(c.variants[0].stop).not.toBe('diverged');
  }, 30_000);
});

describe('tuning with repeats', () => {
  it('tunes each variant once and runs every repeat at the tuned value', async () => {
    const file = scenarioFile('gd-repeats', GD_DOCUMENT);
    const { trace, c, out } = await compareInProcess(file, 'gd-repeats', {
      ladder: ['method.name:gd'],
      tweak: ['run.rounds:60'],
      tune: 'method.stepSize:0.5/1',
      tuneBy: 'final-suboptimality',
      repeats: 2,
    });
    expect(trace.variants).toHaveLength(1);
    expect(trace.variants[0].candidates).toHaveLength(2);
    const tuned = trace.variants[0].tunedValue;
    expect(c.variants[0].tunedValue).toBe(tuned);
    for (const repeat of ['repeat-01', 'repeat-02']) {
      const resolved = readFileSync(join(out, '01-gd', repeat, 'resolved-scenario.yaml'), 'utf8');
      expect(resolved).toMatch(new RegExp(`stepSize: ${tuned}\\b`));
    }
    const repeatsCsv = readFileSync(join(out, 'compare-repeats.csv'), 'utf8');
    expect(repeatsCsv).toContain('name:gd,finalSuboptimality,2,0,');
  }, 60_000);
});

describe('tuning by held-out accuracy', () => {
  it('ranks the candidates of a perceptron on iris by their final test accuracy, higher first', async () => {
    const iris = readFileSync('scenarios/iris-perceptron.yaml', 'utf8');
    const file = join(root, 'iris-perceptron.yaml');
    writeFileSync(file, iris);
    const { trace, c } = await compareInProcess(file, 'iris-accuracy', {
      ladder: ['method.name:fedavg'],
      tweak: ['run.rounds:30'],
      tune: 'method.stepSize:0.003/0.3',
      tuneBy: 'final-test-accuracy',
    });
    const [variant] = trace.variants;
    const accuracies = variant.candidates.map((x) => x.figure as number);
    for (const a of accuracies) {
      expect(a).toBeGreaterThan(0);
      expect(a).toBeLessThanOrEqual(1);
    }
    // 0.003 barely moves the network in 30 rounds; the bundled 0.3 learns the species.
    expect(accuracies[1]).toBeGreaterThan(accuracies[0]);
    expect(variant.tunedValue).toBe(0.3);
    expect(c.variants[0].tunedValue).toBe(0.3);
  }, 60_000);
});

describe('tuned FedAvg, SCAFFOLD and FedLin', () => {
  let result: Awaited<ReturnType<typeof compareInProcess>>;
  beforeAll(async () => {
    const quickstart = readFileSync('scenarios/quickstart.yaml', 'utf8');
    const file = join(root, 'quickstart.yaml');
    writeFileSync(file, quickstart);
    result = await compareInProcess(file, 'methods', {
      ladder: ['method.name:fedavg/scaffold/fedlin'],
      // The scenario's own step size, deliberately small: a guess a user might start from.
      tweak: ['method.stepSize:0.1', 'run.rounds:30'],
      tune: 'method.stepSize:0.03..3',
      tuneBy: 'final-suboptimality',
    });
  }, 60_000);

  it('each beat their untuned runs on final f - f* after the same rounds', () => {
    expect(result.trace.variants.map((v) => v.variant)).toEqual([
      'name:fedavg',
      'name:scaffold',
      'name:fedlin',
    ]);
    for (const [i, v] of result.trace.variants.entries()) {
      expect(v.untuned.value).toBe(0.1);
      expect(v.untuned.figure).not.toBeNull();
      const tunedFinal = readJson<{ suboptimality: { final: number } }>(
        join(result.out, result.c.variants[i].folder),
        'outcome.json',
      ).suboptimality.final;
      expect(tunedFinal, v.variant).toBeLessThan(v.untuned.figure as number);
      expect(tunedFinal).toBe(v.candidates[v.best].figure);
    }
  });

  it('shows each tuned value in compare.json, compare.csv and compare.html, and names the trace', () => {
    const csv = readFileSync(join(result.out, 'compare.csv'), 'utf8').trimEnd().split('\r\n');
    const header = csv[0].split(',');
    const column = header.indexOf('tunedValue');
    expect(column).toBe(header.length - 1);
    const page = readFileSync(join(result.out, 'compare.html'), 'utf8');
    for (const [i, v] of result.trace.variants.entries()) {
      expect(result.c.variants[i].tunedValue).toBe(v.tunedValue);
      expect(Number(csv[i + 1].split(',')[column])).toBe(v.tunedValue);
    }
    expect(result.c.tuning?.trace).toBe('tuning.json');
    expect(page).toContain('tuned by final-suboptimality');
  });
});

describe('bad tuning options', () => {
  async function compareExit(args: string[]): Promise<{ code: number; err: string }> {
    let err = '';
    const file = scenarioFile('bad', GD_DOCUMENT);
    const code = await main(
      [
        'node',
        'roundwire',
        'compare',
        file,
        '--ladder',
        'method.name:gd',
        ...args,
        '--out',
        join(root, 'bad-out'),
      ],
      { out: () => {}, err: (t) => void (err += t) },
    );
    return { code, err };
  }

  it('exit 2 naming the option: an unknown field, a non-positive range, a zero budget, an unknown figure', async () => {
    const unknown = await compareExit(['--tune', 'method.stepSise:0.1..1']);
    expect(unknown.code).toBe(2);
    expect(unknown.err).toMatch(/--tune "method\.stepSise:0\.1\.\.1": .*unknown key/);
    const negative = await compareExit(['--tune', 'method.stepSize:-1..1']);
    expect(negative.code).toBe(2);
    expect(negative.err).toMatch(/--tune "method\.stepSize:-1\.\.1": low end: -1 is not positive/);
    const zero = await compareExit(['--tune', 'method.stepSize:0.1..1', '--tune-budget', '0']);
    expect(zero.code).toBe(2);
    expect(zero.err).toMatch(/--tune-budget "0"/);
    const figure = await compareExit(['--tune', 'method.stepSize:0.1..1', '--tune-by', 'luck']);
    expect(figure.code).toBe(2);
    expect(figure.err).toMatch(/--tune-by "luck": unknown figure/);
  });
});
