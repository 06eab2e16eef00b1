// compare with repeats, run in process (and one small distributed comparison): the verdict over
// repeats, divergence and failures that never end a comparison. Numbers: a step size above 2/L
// makes gradient descent on a quadratic diverge (Nesterov, Introductory Lectures on Convex
// Optimization, Thm 2.1.15 needs 0 < eta < 2/L); the quickstart's L is of order 1, so 1e3 is far
// above it and 1e300 overflows in the first round; "auto" is 1/L, which converges.
import { afterAll, describe, expect, it } from 'vitest';
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import {
  planComparison,
  runComparison,
  type ComparisonResult,
} from '../../src/commands/compare-command.js';
import { repeatSeed } from '../../src/report/repeat-plan.js';

const root = mkdtempSync(join(tmpdir(), 'roundwire-repeats-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));

const quiet = { err: () => undefined };

/** Quickstart with lognormal speeds and jitter: the seed moves the time to target, not the rounds. */
const RANDOM_SPEEDS = ['timing.slowdown:{kind: lognormal, sigma: 0.5}', 'timing.jitter:0.3'];

async function compare(
  name: string,
  tweaks: string[],
  ladder: string[],
  options: { repeats?: number; distributed?: boolean } = {},
): Promise<{ out: string; c: ComparisonResult }> {
  const plan = planComparison('scenarios/quickstart.yaml', {
    ladder,
    tweak: tweaks,
    repeats: options.repeats,
  });
  const out = join(root, name);
  const c = await runComparison(plan, out, { distributed: options.distributed }, quiet);
  return { out, c };
}

describe('compare --repeats', () => {
  it('two variants that differ only by seed: no clear winner, paired seeds, statistics in every file', async () => {
    const { out, c } = await compare(
      'seed-only',
      [...RANDOM_SPEEDS, 'run.target:1e-4', 'run.rounds:40', 'dataSeed:7'],
      ['seed:7/8'],
      { repeats: 5 },
    );
    const r = c.repeats!;
    expect(r.count).toBe(5);
    const seconds = r.verdict.find((v) => v.figure === 'secondsToTarget')!;
    expect(seconds.decision).toBe('no-clear-winner');
    expect(seconds.difference!.lower).toBeLessThanOrEqual(0);
    expect(seconds.difference!.upper).toBeGreaterThan(0);
    // each variant's repeats: its own seed first, then seeds derived from it; the data fixed
    for (const [i, v] of r.variants.entries()) {
      const own = 7 + i;
      expect(v.runs.map((x) => x.seed)).toEqual([1, 2, 3, 4, 5].map((k) => repeatSeed(own, k)));
      expect(new Set(v.runs.map((x) => x.dataSeed))).toEqual(new Set([7]));
      const s = v.figures.secondsToTarget;
      expect(s).toMatchObject({ n: 5, missing: 0, method: 't' });
      expect(s.lower!).toBeLessThan(s.mean!);
      expect(s.upper!).toBeGreaterThan(s.mean!);
      // the data is fixed, so the timing's seed moves the seconds but not the rounds
      expect(v.figures.roundsToTarget.sd).toBe(0);
      expect(s.sd!).toBeGreaterThan(0);
    }
    const json = JSON.parse(readFileSync(join(out, 'compare.json'), 'utf8')) as ComparisonResult;
    expect(json.repeats!.verdict[0].decision).toBe(r.verdict[0].decision);
    const csv = readFileSync(join(out, 'compare-repeats.csv'), 'utf8').trimEnd().split('\r\n');
    expect(csv[0]).toBe('variant,figure,n,missing,mean,sd,lower,upper,method,confidence');
    expect(csv).toHaveLength(1 + 2 * 7);
    const html = readFileSync(join(out, 'compare.html'), 'utf8');
    expect(html).toContain('no clear winner at 95% confidence');
    expect(html).toContain('seconds to target: mean and interval');
  }, 120_000);

  it('a sweep with diverging step sizes completes in process: diverged repeats counted, the rest ranked', async () => {
    const { c } = await compare(
      'diverging',
      [...RANDOM_SPEEDS, 'run.rounds:30', 'run.target:1e-3'],
      ['method.stepSize:auto/1e3/1e300'],
      { repeats: 3 },
    );
    const [auto, big, huge] = c.repeats!.variants;
    expect(auto.diverged).toBe(0);
    expect(big.diverged).toBe(3);
    expect(huge.diverged).toBe(3);
    expect(big.figures.finalSuboptimality).toMatchObject({ n: 0, missing: 3, mean: null });
    const bytes = c.repeats!.verdict.find((v) => v.figure === 'bytesToTarget')!;
    expect(bytes.decision).toBe('only-one-ranked');
    expect(bytes.leader!.variant).toBe('stepSize:auto');
    expect(c.variants.map((row) => row.stop)).toEqual(['target-reached', 'diverged', 'diverged']);
  }, 120_000);

  it('a run that ends in an error is recorded as failed with its reason, and the others go on', async () => {
    const plan = planComparison('scenarios/quickstart.yaml', {
      ladder: ['method.localSteps:2/3'],
      tweak: ['run.rounds:5'],
    });
    const out = join(root, 'failing');
    // A file where the first variant's results folder must go: writing its results fails.
    mkdirSync(out, { recursive: true });
    writeFileSync(join(out, plan.variants[0].variant.folderName), 'in the way');
    const c = await runComparison(plan, out, {}, quiet);
    expect(c.variants.map((row) => row.stop)).toEqual(['failed', 'rounds-complete']);
    const json = JSON.parse(readFileSync(join(out, 'compare.json'), 'utf8')) as ComparisonResult;
    expect(json.variants[0].stop).toBe('failed');
    expect(readFileSync(join(out, 'compare.html'), 'utf8')).toContain('failed');
  }, 60_000);
});

describe('compare --distributed with a diverging step size', () => {
  it('completes, records the variant as diverged and ranks the rest', async () => {
    const { c } = await compare(
      'distributed',
      ['run.rounds:20', 'run.target:1e-3', 'run.workers:1', 'clients.count:4'],
      ['method.stepSize:auto/1e300'],
      { distributed: true },
    );
    expect(c.runtime).toBe('distributed');
    expect(c.variants.map((row) => row.stop)).toEqual(['target-reached', 'diverged']);
    expect(c.verdict.reachedTarget).toBe(1);
    expect(c.verdict.fewestBytesToTarget!.variant).toBe('stepSize:auto');
  }, 60_000);
});
