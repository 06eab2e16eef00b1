// The search over one field's candidate values: a list, a log grid, or golden-section search on
// log(value). The search only orders candidates (through `better`), so a candidate without the
// figure or a diverged one takes part like any other. Every evaluation is kept, in order, as the
// trace; the winner is the best of them all (golden section may visit its best point early).

/** Where a search looks, as the tuning spec gives it. */
export type SearchPlan =
  | { kind: 'list'; values: number[] }
  | { kind: 'grid'; low: number; high: number; pointsPerDecade: number }
  | { kind: 'golden'; low: number; high: number; budget: number };

/** (sqrt(5) - 1) / 2: the interval shrinks by this each step (Kiefer's golden-section search). */
const GOLDEN_FRACTION = (Math.sqrt(5) - 1) / 2;

/** Fewest evaluations of a golden-section search: its first two interior points. */
export const GOLDEN_BUDGET_MIN = 2;

/**
 * low * 10^(k / pointsPerDecade) for k = 0, 1, ... up to high; high itself is added when the
 * steps miss it, so that both ends are tried. Relative slack of 1e-9 absorbs rounding in 10^x.
 */
export function logGrid(low: number, high: number, pointsPerDecade: number): number[] {
  const decades = Math.log10(high / low);
  const steps = Math.floor(decades * pointsPerDecade + 1e-9);
  const points: number[] = [];
  for (let k = 0; k <= steps; k++) points.push(low * 10 ** (k / pointsPerDecade));
  if (points[points.length - 1] < high * (1 - 1e-9)) points.push(high);
  return points;
}

/** The candidates a grid or list tries, in order; golden section chooses its own as it goes. */
export function fixedCandidates(plan: SearchPlan): number[] | null {
  if (plan.kind === 'list') return plan.values;
  if (plan.kind === 'grid') return logGrid(plan.low, plan.high, plan.pointsPerDecade);
  return null;
}

export interface SearchStep<M> {
  value: number;
  measure: M;
}

/** Runs the search; `better(a, b)` is negative when a ranks before b. Returns every step, in order. */
export function runSearch<M>(
  plan: SearchPlan,
  evaluate: (value: number) => M,
  better: (a: M, b: M) => number,
): SearchStep<M>[] {
  const fixed = fixedCandidates(plan);
  if (fixed !== null) return fixed.map((value) => ({ value, measure: evaluate(value) }));
  if (plan.kind !== 'golden') throw new RangeError(`runSearch: unknown search ${plan.kind}`);
  const steps: SearchStep<M>[] = [];
  const at = (logValue: number): M => {
    const value = 10 ** logValue;
    const measure = evaluate(value);
    steps.push({ value, measure });
    return measure;
  };
  let a = Math.log10(plan.low);
  let b = Math.log10(plan.high);
  let c = b - GOLDEN_FRACTION * (b - a);
  let d = a + GOLDEN_FRACTION * (b - a);
  let fc = at(c);
  let fd = at(d);
  while (steps.length < plan.budget) {
    // Ties keep the lower half: the smaller value is the safer one when two candidates rank alike.
    if (better(fc, fd) <= 0) {
      b = d;
      d = c;
      fd = fc;
      c = b - GOLDEN_FRACTION * (b - a);
      fc = at(c);
    } else {
      a = c;
      c = d;
      fc = fd;
      d = a + GOLDEN_FRACTION * (b - a);
      fd = at(d);
    }
  }
  return steps;
}

/** The index of the best step; ties go to the earlier one. */
export function bestStep<M>(
  steps: readonly SearchStep<M>[],
  better: (a: M, b: M) => number,
): number {
  let best = 0;
  for (let i = 1; i < steps.length; i++)
    if (better(steps[i].measure, steps[best].measure) < 0) best = i;
  return best;
}
