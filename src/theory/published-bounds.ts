// Published linear-rate bounds, for the report beside the exact prediction and the measurement.
// For each method: the theorems that bound its per-round contraction, each with its conditions,
// whether the run meets them, the quantity it bounds, and its source. Where no bound is given,
// an entry says why (none published under these conditions, or one published whose exact
// statement we could not read, which is left out rather than recalled).
//
// Only gradient descent has bounds here, and only those whose statement and constants were
// read (Bubeck 2015, Theorem 3.10, a bound on ||x - x*||^2 for step 1/L, was not, and is left
// out). FedAvg, FedProx and FedNova with tau_i = 1 in every round take one full gradient step
// x <- x - eta_g eta grad f(x), so the gradient descent theorems cover them then, with the
// step h = eta_g eta.
//
// Conversion to the rate of f - f*. A bound q per round on ||x - x*||^2 gives, with
// (mu/2)||x - x*||^2 <= f(x) - f* <= (L/2)||x - x*||^2 (strong convexity, smoothness),
//   f_k - f* <= (L/2) q^k ||x_0 - x*||^2 <= (L/mu) q^k (f_0 - f*),
// so q bounds the asymptotic per-round rate of f - f* (lim sup (f_k - f*)^(1/k) <= q), though
// not round by round (the factor L/mu). That is the rate the exact prediction gives, so the two
// compare; each converted entry says so.

import { z } from 'zod';
import { keptCount } from '../compress/compressor.js';
import { methodSchema, type CompressorSpec, type Scenario } from '../scenario/schema.js';

/** What an entry is: a bound the run meets, one it does not, none published, or one left out. */
export const boundStatusSchema = z.enum([
  'applies',
  'does-not-apply',
  'none-published',
  'left-out',
]);

export const boundQuantitySchema = z.enum(['f - f*', '||x - x*||^2']);

/** One entry of outcome.json's `bounds`; the schema is the one definition of its shape. */
export const publishedBoundSchema = z.object({
  method: methodSchema.shape.name,
  /** a short name: what the theorem is about and under which step */
  label: z.string(),
  /** the inequality as published, in the run's notation */
  statement: z.string(),
  quantity: boundQuantitySchema.nullable(),
  /** the bound's contraction per round on its quantity, where it applies */
  ratePerRound: z.number().nullable(),
  /** the per-round rate of f - f* it implies, where it applies and the conversion is valid */
  suboptimalityRatePerRound: z.number().nullable(),
  /** how ratePerRound became a rate of f - f*, and in what sense */
  conversion: z.string().nullable(),
  conditions: z.array(z.string()),
  status: boundStatusSchema,
  /** "does not apply: <which condition>", or why none is given */
  reason: z.string().nullable(),
  /** authors, title, venue, year and the theorem or equation */
  source: z.string(),
  /** how the statement was checked before it was written here */
  provenance: z.string(),
});
export type PublishedBound = z.infer<typeof publishedBoundSchema>;

type MethodName = Scenario['method']['name'];

/** What the bounds depend on: the problem's constants and the run's conditions. */
export interface BoundInputs {
  method: MethodName;
  /** L of f (exact for least squares, a valid bound otherwise) */
  smoothness: number;
  /** mu of f (exact for least squares, a valid bound otherwise) */
  strongConvexity: number;
  /** the local step size eta, resolved */
  stepSize: number;
  /** fixed eta, or eta_i = eta/tau_i */
  stepPolicy: Scenario['method']['stepPolicy'];
  /** eta_g */
  serverStepSize: number;
  /** tau_i of the plan */
  plannedSteps: ArrayLike<number>;
  participation: number;
  fullGradients: boolean;
  /** every channel and field keeps every entry at full width */
  uncompressed: boolean;
  policy: Scenario['timing']['policy']['kind'];
}

/** The run's conditions as the bounds read them, from its scenario and plan. */
export function boundInputsFor(
  scenario: Scenario,
  plan: { dim: number; plannedSteps: ArrayLike<number>; stepSize: number },
  constants: { smoothness: number; strongConvexity: number },
): BoundInputs {
  const exact = (c: CompressorSpec) => c.values === 'f64' && keptCount(plan.dim, c) >= plan.dim;
  const channels = [scenario.compression.uplink, scenario.compression.downlink];
  return {
    method: scenario.method.name,
    smoothness: constants.smoothness,
    strongConvexity: constants.strongConvexity,
    stepSize: plan.stepSize,
    stepPolicy: scenario.method.stepPolicy,
    serverStepSize: scenario.method.serverStepSize,
    plannedSteps: plan.plannedSteps,
    participation: scenario.method.participation,
    fullGradients: scenario.method.gradient === 'full',
    uncompressed: channels.every(
      (ch) => exact(ch.default) && Object.values(ch.fields).every(exact),
    ),
    policy: scenario.timing.policy.kind,
  };
}

/** Relative slack for "h = 1/L" and "h <= 2/(mu + L)": a step resolved as 1/L is within it. */
const STEP_RELATIVE_TOLERANCE = 1e-12;

const NESTEROV =
  'Yu. Nesterov, Lectures on Convex Optimization, 2nd ed., Springer, 2018, Theorem 2.1.15 (the same number in Introductory Lectures on Convex Optimization, Kluwer, 2004)';
const NESTEROV_READ =
  'statement and constants read as quoted word for word from the 2018 edition (pp. 101-102) by a secondary source, not in the book itself; the tests check the value against the exact spectral radius and a measured run';
const KARIMI =
  'H. Karimi, J. Nutini and M. Schmidt, Linear Convergence of Gradient and Proximal-Gradient Methods Under the Polyak-Lojasiewicz Condition, ECML PKDD 2016, Theorem 1';
const KARIMI_READ =
  'read in secondary sources: Theorem 1 is gradient descent with step 1/L on an L-smooth f satisfying the PL inequality (1/2)||grad f||^2 >= mu (f - f*), which mu-strong convexity implies with the same mu; the factor 1 - mu/L follows from these and was not read in the paper itself; the tests check it against the exact spectral radius and round by round on a measured run';
const DISTANCE_CONVERSION =
  'asymptotic only: f_k - f* <= (L/mu) q^k (f_0 - f*) because (mu/2)||x - x*||^2 <= f - f* <= (L/2)||x - x*||^2, so q bounds the per-round rate of f - f* over many rounds (the rate the prediction gives), not each round';

/**
 * Each client's step size eta_i in every round, or null where the timing sets it: under the
 * inverse-steps policy eta_i = eta/tau_i, and only the "all" policy keeps tau_i as planned.
 */
function clientStepSizes(inputs: BoundInputs): number[] | null {
  const steps = Array.from(inputs.plannedSteps);
  if (inputs.stepPolicy === 'fixed') return steps.map(() => inputs.stepSize);
  if (inputs.policy !== 'all') return null;
  return steps.map((tau) => inputs.stepSize / tau);
}

/**
 * The conditions every gradient descent theorem here shares, the first the run fails, and the
 * step h = eta_g eta_i of the gradient step x <- x - h grad f(x) that a round then is. Unequal
 * eta_i would weigh the clients' gradients other than p_i: a step on another function than f.
 */
function gradientStepConditions(inputs: BoundInputs): {
  conditions: string[];
  failed: string | null;
  step: number;
} {
  const etas = clientStepSizes(inputs);
  const oneEta = etas !== null && etas.every((eta) => eta === etas[0]);
  const checks: [string, boolean][] = [
    [
      `f is L-smooth and mu-strongly convex with mu > 0 (mu = ${inputs.strongConvexity.toPrecision(6)})`,
      inputs.strongConvexity > 0 && inputs.smoothness > 0,
    ],
    ['full gradients (no minibatches)', inputs.fullGradients],
    [
      `every client in every round (participation ${inputs.participation})`,
      inputs.participation >= 1,
    ],
    ['no compression', inputs.uncompressed],
    [
      `no update dropped by the round policy (policy ${inputs.policy})`,
      inputs.policy !== 'fastest-k',
    ],
    [
      `one step size eta_i for every client and round (step policy ${inputs.stepPolicy}, round policy ${inputs.policy})`,
      oneEta,
    ],
  ];
  if (inputs.method !== 'gd')
    checks.push([
      'tau_i = 1 for every client and round, so that a round is one gradient step (policy all, localSteps 1)',
      inputs.policy === 'all' && Array.from(inputs.plannedSteps).every((tau) => tau === 1),
    ]);
  const failed = checks.find(([, ok]) => !ok);
  return {
    conditions: checks.map(([text]) => text),
    failed: failed ? failed[0] : null,
    step: inputs.serverStepSize * (oneEta ? etas[0] : inputs.stepSize),
  };
}

interface GradientTheorem {
  label: string;
  statement: string;
  quantity: z.infer<typeof boundQuantitySchema>;
  stepCondition: string;
  stepHolds: (h: number, mu: number, L: number) => boolean;
  rate: (h: number, mu: number, L: number) => number;
  conversion: string | null;
  source: string;
  provenance: string;
}

const GRADIENT_THEOREMS: GradientTheorem[] = [
  {
    label: 'gradient descent, step 1/L: f - f*',
    statement: 'f(x_k) - f* <= (1 - mu/L)^k (f(x_0) - f*)',
    quantity: 'f - f*',
    stepCondition: 'step h = eta_g eta_i = 1/L',
    stepHolds: (h, _mu, L) => Math.abs(h * L - 1) <= STEP_RELATIVE_TOLERANCE,
    rate: (_h, mu, L) => 1 - mu / L,
    conversion: null,
    source: KARIMI,
    provenance: KARIMI_READ,
  },
  {
    label: 'gradient descent, step in (0, 2/(mu + L)]: ||x - x*||^2',
    statement: '||x_k - x*||^2 <= (1 - 2 h mu L/(mu + L))^k ||x_0 - x*||^2',
    quantity: '||x - x*||^2',
    stepCondition: 'step h = eta_g eta_i in (0, 2/(mu + L)]',
    stepHolds: (h, mu, L) => h > 0 && h * (mu + L) <= 2 * (1 + STEP_RELATIVE_TOLERANCE),
    rate: (h, mu, L) => 1 - (2 * h * mu * L) / (mu + L),
    conversion: DISTANCE_CONVERSION,
    source: NESTEROV,
    provenance: NESTEROV_READ,
  },
];

function gradientDescentBounds(inputs: BoundInputs): PublishedBound[] {
  const { conditions, failed, step: h } = gradientStepConditions(inputs);
  const mu = inputs.strongConvexity;
  const L = inputs.smoothness;
  return GRADIENT_THEOREMS.map((t) => {
    const stepOk = t.stepHolds(h, mu, L);
    const notMet =
      failed ??
      (stepOk
        ? null
        : `${t.stepCondition} (h = ${h.toPrecision(6)}, L = ${L.toPrecision(6)}, mu = ${mu.toPrecision(6)})`);
    const rate = notMet === null ? t.rate(h, mu, L) : null;
    return {
      method: inputs.method,
      label: t.label,
      statement: t.statement,
      quantity: t.quantity,
      ratePerRound: rate,
      suboptimalityRatePerRound: rate,
      conversion: t.conversion,
      conditions: [...conditions, t.stepCondition],
      status: notMet === null ? 'applies' : 'does-not-apply',
      reason: notMet === null ? null : `does not apply: ${notMet}`,
      source: t.source,
      provenance: t.provenance,
    };
  });
}

function entryWithoutValue(
  method: MethodName,
  status: 'none-published' | 'left-out',
  label: string,
  reason: string,
  source: string,
): PublishedBound {
  return {
    method,
    label,
    statement: '',
    quantity: null,
    ratePerRound: null,
    suboptimalityRatePerRound: null,
    conversion: null,
    conditions: [],
    status,
    reason,
    source,
    provenance: 'recalled from memory, not read in the source here',
  };
}

const FIXED_POINTS =
  'fixed points: R. Pathak and M. J. Wainwright, FedSplit: An algorithmic framework for fast federated optimization, NeurIPS 2020';

const LOCAL_STEP_METHODS: Record<'fedavg' | 'fedprox' | 'fednova', string> = {
  fedavg: `H. B. McMahan et al., Communication-Efficient Learning of Deep Networks from Decentralized Data, AISTATS 2017; ${FIXED_POINTS}`,
  fedprox: `T. Li et al., Federated Optimization in Heterogeneous Networks, MLSys 2020; ${FIXED_POINTS}`,
  fednova:
    'J. Wang et al., Tackling the Objective Inconsistency Problem in Heterogeneous Federated Optimization, NeurIPS 2020',
};

const NOT_READ =
  'left out: a linear rate is published for this method, but its exact statement and constants could not be read here, and a value recalled from memory is not given';

/** Every entry for the run's method: bounds with their status, or why there are none. */
export function publishedBounds(inputs: BoundInputs): PublishedBound[] {
  switch (inputs.method) {
    case 'gd':
      return gradientDescentBounds(inputs);
    case 'fedavg':
    case 'fedprox':
    case 'fednova': {
      const oneStep = gradientDescentBounds(inputs);
      if (oneStep.some((b) => b.status === 'applies')) return oneStep;
      return [
        ...oneStep,
        entryWithoutValue(
          inputs.method,
          'none-published',
          `${inputs.method} with local steps: rate to x*`,
          "no published linear rate to the optimum under these conditions: with tau_i > 1 on clients whose minimizers differ, the round map's fixed point is not x* in general (client drift; the exact prediction gives its floor), so no linear rate to x* can hold; published analyses bound convergence to a neighbourhood or at a sublinear rate",
          LOCAL_STEP_METHODS[inputs.method],
        ),
      ];
    }
    case 'scaffold':
      return [
        entryWithoutValue(
          'scaffold',
          'left-out',
          'SCAFFOLD, strongly convex case',
          NOT_READ,
          'S. P. Karimireddy et al., SCAFFOLD: Stochastic Controlled Averaging for Federated Learning, ICML 2020 (its strongly convex theorem)',
        ),
      ];
    case 'fedlin':
      return [
        entryWithoutValue(
          'fedlin',
          'left-out',
          'FedLin, strongly convex case',
          NOT_READ,
          'FedLin (NeurIPS 2021), its strongly convex theorem',
        ),
      ];
    case 'fedsplit':
      return [
        entryWithoutValue(
          'fedsplit',
          'left-out',
          'FedSplit, strongly convex and smooth f_i',
          `${NOT_READ}. Besides, this fedsplit solves each prox inexactly by at most tau_i gradient steps, so the exact-prox theorem does not cover it as run; the paper treats inexact prox steps separately (convergence to a neighbourhood set by the prox error)`,
          'R. Pathak and M. J. Wainwright, FedSplit: An algorithmic framework for fast federated optimization, NeurIPS 2020, Theorem 1 (exact proximal steps)',
        ),
      ];
  }
}
