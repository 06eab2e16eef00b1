// Exact Jacobian-vector products of the round map T at a state s, for the local predictions of
// smooth (non-quadratic) objectives.
//
// Why the tangent walk is exact. Every method's round, with full gradients, full participation
// and exact messages, is linear in (its state, the gradients its clients compute) with no other
// nonlinearity and no constant term. Checked method by method (src/algorithm/):
// - gd, fedavg, fednova: y <- x, y <- y - eta_i g, delta = y - x, x <- x + c sum p~_i delta_i,
//   with c = eta_g (FedNova: -eta_g tau_eff / tau_i per client, fixed by the plan's tau_i).
// - fedprox: y <- y - eta_i (g + mu (y - x)), linear in y, x and g.
// - scaffold: the correction c - c_i, the steps and c_i+ = c_i - c + (x - y) / (tau_i eta_i)
//   are linear in x, c, c_i, y and g; the server sums them with fixed weights.
// - fedlin: the anchor gradient grad f_i(x) is one more gradient call; the rest is linear.
// - fedsplit: the centre 2x - z_i, the inner steps u <- u - alpha (g + (u - v)/s) and
//   z_i <- z_i + 2 (u - x) are linear, with alpha read once from the objective's smoothness
//   bound (a number the state keeps); but a positive proxTolerance stops the inner steps on a
//   test of ||grad h||, a branch the tangent cannot follow, so that case is refused.
// Flags and counters (FedLin's anchorReady, FedSplit's started and joined) are not Float64Array
// leaves: they are carried from the template and are the same in every walk. Hence
// J(s) v = the same round walked from v on a "tangent objective" whose k-th gradient call returns
// H(x_k) times its argument, x_k being the point of the k-th gradient call of the primal round
// from s (recorded in order, client by client). For least squares H is constant and J is the
// linear part M of the affine map.

import { NONCONVEX_BLOCKER } from './trajectory-blocker.js';
import type { LinearOperator } from '../linalg/linear-operator.js';
import type { SymmetricOperator } from '../linalg/spectrum.js';
import { hessianOperatorOf, type Objective } from '../problem/objective.js';
import { applyRoundMap, type RoundMap } from '../theory/affine-map.js';
import type { RoundMapLinearization } from '../theory/newton-fixed-point.js';
import { TheoryError } from '../theory/theory-error.js';
import { roundMapChangeBlocker, roundMapOver } from './round-map.js';
import type { RunPlan } from './run-plan.js';

/**
 * Entries the linearization keeps for one state, over every client: each gradient call's point
 * (d entries) and, once a product needs it, its Hessian operator's per-sample curvature (n_i
 * entries). 2^24 entries are 128 MiB; tau_i up to LOCAL_STEPS_MAX could ask for far more.
 */
export const LINEARIZATION_ENTRIES_MAX = 2 ** 24;

/** Why the round map of `plan` cannot be linearized by a tangent walk, or null. */
export function linearizationBlocker(plan: Pick<RunPlan, 'scenario' | 'dim'>): string | null {
  if (plan.scenario.problem.kind === 'perceptron') return NONCONVEX_BLOCKER;
  const blocker = roundMapChangeBlocker(plan);
  if (blocker !== null) return blocker;
  const method = plan.scenario.method;
  if (method.name === 'fedsplit' && method.proxTolerance > 0)
    return 'FedSplit stops its inner steps on a gradient-norm test (proxTolerance > 0), a branch the linearized round cannot follow';
  return null;
}

/**
 * An objective standing in for `base` during a walk of the round map: its shape and curvature
 * bounds are base's; the linearized map is defined for full gradients only.
 */
abstract class StandInObjective implements Objective {
  readonly kind: Objective['kind'];
  readonly dim: number;
  readonly sampleCount: number;
  readonly regularization: number;
  protected readonly base: Objective;

  constructor(base: Objective) {
    this.base = base;
    this.kind = base.kind;
    this.dim = base.dim;
    this.sampleCount = base.sampleCount;
    this.regularization = base.regularization;
  }

  abstract loss(x: Float64Array): number;
  abstract gradient(x: Float64Array, out: Float64Array): void;
  abstract hessianVector(x: Float64Array, v: Float64Array, out: Float64Array): void;
  minibatchGradient(): void {
    throw new Error('the linearized round map is defined for full gradients only');
  }
  smoothnessBound(): number {
    return this.base.smoothnessBound();
  }
  strongConvexityBound(): number {
    return this.base.strongConvexityBound();
  }
}

/** Records the point of every full-gradient call, in call order. */
class RecordingObjective extends StandInObjective {
  readonly points: Float64Array[] = [];

  loss(x: Float64Array): number {
    return this.base.loss(x);
  }
  gradient(x: Float64Array, out: Float64Array): void {
    this.points.push(Float64Array.from(x));
    this.base.gradient(x, out);
  }
  hessianVector(x: Float64Array, v: Float64Array, out: Float64Array): void {
    this.base.hessianVector(x, v, out);
  }
}

/** Its k-th gradient call returns H(x_k) times its argument, x_k the primal round's k-th point. */
class TangentObjective extends StandInObjective {
  private points: readonly Float64Array[] = [];
  private operators: (SymmetricOperator | undefined)[] = [];
  private calls = 0;

  /** Linearize around these points from now on. */
  linearizeAt(points: readonly Float64Array[]): void {
    this.points = points;
    this.operators = new Array<SymmetricOperator | undefined>(points.length);
    this.calls = 0;
  }
  /** Starts a tangent walk; returns the calls of the one before. */
  restart(): number {
    const calls = this.calls;
    this.calls = 0;
    return calls;
  }
  get pointCount(): number {
    return this.points.length;
  }

  loss(): number {
    throw new Error('a tangent objective has no loss');
  }
  gradient(v: Float64Array, out: Float64Array): void {
    const k = this.calls++;
    if (k >= this.points.length)
      throw new Error(
        `the tangent round made gradient call ${k + 1}, the primal round only ${this.points.length}`,
      );
    // Per-sample curvature computed once per point: GMRES and Arnoldi apply J many times.
    let operator = this.operators[k];
    if (operator === undefined) {
      operator = hessianOperatorOf(this.base, this.points[k]);
      this.operators[k] = operator;
    }
    operator(v, out);
  }
  hessianVector(): void {
    throw new Error('a tangent objective has no Hessian of its own');
  }
}

/**
 * s -> (T(s), v -> J(s) v) for the round map of `plan` on states shaped like `template` (a
 * PlanRoundMap's). Each linearization walks one primal round; each product one tangent round.
 * Throws E_THEORY_SIZE_LIMIT past LINEARIZATION_ENTRIES_MAX, E_THEORY_NOT_FINITE when the
 * round is not finite.
 */
export function roundMapLinearization(
  plan: RunPlan,
  objectives: readonly Objective[],
  template: unknown,
): RoundMapLinearization {
  const blocker = linearizationBlocker(plan);
  if (blocker !== null) throw new Error(`the round map cannot be linearized: ${blocker}`);
  const recording = objectives.map((o) => new RecordingObjective(o));
  const tangent = objectives.map((o) => new TangentObjective(o));
  const primalMap: RoundMap = roundMapOver(plan, recording, template);
  const tangentMap: RoundMap = roundMapOver(plan, tangent, template);
  return (state) => {
    for (const r of recording) r.points.length = 0;
    const image = applyRoundMap(primalMap, state);
    let entries = 0;
    recording.forEach((r, i) => {
      entries += r.points.length * (plan.dim + objectives[i].sampleCount);
    });
    if (entries > LINEARIZATION_ENTRIES_MAX)
      throw new TheoryError(
        'E_THEORY_SIZE_LIMIT',
        `linearizing one round keeps ${entries} entries (gradient points and their curvatures), above the limit of ${LINEARIZATION_ENTRIES_MAX}`,
      );
    recording.forEach((r, i) => tangent[i].linearizeAt(r.points.slice()));
    const jvp: LinearOperator = (v) => {
      for (const t of tangent) t.restart();
      const out = applyRoundMap(tangentMap, v);
      // The tangent walk must retrace the primal one call for call, or it linearized another path.
      for (const t of tangent) {
        const calls = t.restart();
        if (calls !== t.pointCount)
          throw new Error(
            `the tangent round made ${calls} gradient calls, the primal round ${t.pointCount}`,
          );
      }
      return out;
    };
    return { image, jvp };
  };
}
