// The oracle's answer for a scenario: x*, f*, the certificate and the constants. Solving is the
// expensive part of a short run, so results are cached per hash of the parts of the plan that
// define the problem (seed, problem, data, clients); method, timing and compression do not
// change the optimum. Two caches: this process's memory, and a TheoryStore that the composition
// root may install (a folder on disk, so that run, compare and theory on one problem solve it
// once). A stored answer is never trusted as it is: its certificate is recomputed from the data
// (one gradient), and one that fails is reported through the store's warning and solved again.
//
// What every run needs (x*, f*, L, mu, heterogeneity) is solved at once; what only the theory
// report shows (the Hessian at x*, every client's constants and own minimizer) when asked.

import type { Scenario } from '../scenario/schema.js';
import { hashOf } from '../scenario/plan-hash.js';
import { dataSeedOf } from '../scenario/data-seed.js';
import { buildProblemInstance, type ProblemInstance } from '../data/problem-instance.js';
import { WeightedSumObjective } from '../problem/weighted-sum.js';
import { allFinite, norm2 } from '../vec/kernels.js';
import { ORACLE_VERSION, solveOptimum } from './oracle.js';
import { initialModelOf } from '../problem/initial-model.js';
import { REFERENCE_ITERATIONS_MAX, referenceRun, type ReferenceRun } from './reference-run.js';
import type { OptimumCertificate } from './oracle-certificate.js';
import {
  clientConstants,
  curvatureAtOptimum,
  globalConstants,
  type ClientConstants,
  type CurvatureAtOptimum,
  type GlobalConstants,
} from './constants.js';

export interface PlanTheory {
  problemHash: string;
  instance: ProblemInstance;
  /**
   * x* and f* with their certificate; for a nonconvex objective (`reference` set) the end of the
   * reference run instead: a reference point and loss, not an optimum.
   */
  optimum: OptimumCertificate;
  /** L, mu and the condition number are NaN where no such constant exists (nonconvex) */
  constants: GlobalConstants;
  /** set for a nonconvex objective: how its reference was found (reference-run.ts) */
  reference: ReferenceFacts | null;
}

/** What a reference run was: its budget and why it stopped. */
export interface ReferenceFacts {
  iterationsMax: number;
  ending: ReferenceRun['ending'];
}

/** What only the theory report asks for. */
export interface TheoryDetails {
  hessianAtOptimum: CurvatureAtOptimum;
  /** in client order */
  clients: ClientConstants[];
}

/** An answer as a store keeps it; the condition number is derived again on reading. */
export interface StoredTheory {
  optimum: { x: number[]; loss: number; gradientNorm: number; iterations: number };
  /** L and mu null where there are none (a nonconvex objective) */
  constants: { smoothness: number | null; strongConvexity: number | null; heterogeneity: number };
  details: TheoryDetails | null;
  /** a nonconvex objective's reference run; absent for an optimum */
  reference?: ReferenceFacts;
}

/**
 * Somewhere outside this process to keep answers, keyed by problem hash and oracle version. A
 * store checks its own integrity (a damaged or foreign entry reads as null, with a warning).
 */
export interface TheoryStore {
  read(problemHash: string, oracleVersion: number): StoredTheory | null;
  write(problemHash: string, oracleVersion: number, entry: StoredTheory): void;
  warn(message: string): void;
}

/** Distinct problems kept per process; a compare run touches a handful. */
export const theoryCacheEntriesMax = 8;
/** The certificate a stored optimum must still meet: the oracle's default tolerance. */
const STORED_GRADIENT_TOLERANCE = 1e-10;

const cache = new Map<string, PlanTheory>();
const detailCache = new Map<string, TheoryDetails>();
let store: TheoryStore | null = null;

/** Installs (or, with null, removes) the store every later theoryOf reads and writes. */
export function useTheoryStore(next: TheoryStore | null): void {
  store = next;
}

export function problemHashOf(scenario: Scenario): string {
  return hashOf({
    // The data's seed defines the problem, so repeats over fixed data share one answer; a
    // perceptron's reference run starts where the run's own seed puts it, so both count there.
    ...(scenario.problem.kind === 'perceptron'
      ? { seed: scenario.seed, dataSeed: scenario.dataSeed }
      : { seed: dataSeedOf(scenario) }),
    problem: scenario.problem,
    data: scenario.data,
    clients: scenario.clients,
  });
}

function remember(theory: PlanTheory): void {
  cache.set(theory.problemHash, theory);
  if (cache.size > theoryCacheEntriesMax) {
    const oldest = cache.keys().next().value as string;
    cache.delete(oldest);
    detailCache.delete(oldest);
  }
}

function toStored(theory: PlanTheory, details: TheoryDetails | null): StoredTheory {
  const { x, loss, gradientNorm, iterations } = theory.optimum;
  const { smoothness, strongConvexity, heterogeneity } = theory.constants;
  const orNull = (value: number) => (Number.isNaN(value) ? null : value);
  return {
    optimum: { x: Array.from(x), loss, gradientNorm, iterations },
    constants: {
      smoothness: orNull(smoothness),
      strongConvexity: orNull(strongConvexity),
      heterogeneity,
    },
    details,
    ...(theory.reference === null ? {} : { reference: theory.reference }),
  };
}

/**
 * The stored answer if its optimum still certifies on this instance (dimension, finite values,
 * ||grad f(x)|| at or below the tolerance, recomputed here), else null with a warning.
 */
function verified(
  problemHash: string,
  instance: ProblemInstance,
  entry: StoredTheory,
): PlanTheory | null {
  const x = Float64Array.from(entry.optimum.x);
  const where = `the cached oracle answer for problem ${problemHash.slice(0, 12)}`;
  if (x.length !== instance.dim || !allFinite(x)) {
    store?.warn(`${where} has the wrong shape; solving again`);
    return null;
  }
  const gradient = new Float64Array(instance.dim);
  instance.global.gradient(x, gradient);
  const gradientNorm = norm2(gradient);
  if (!(gradientNorm <= STORED_GRADIENT_TOLERANCE)) {
    store?.warn(
      `${where} fails its certificate (||grad f|| = ${gradientNorm.toExponential(3)}); solving again`,
    );
    return null;
  }
  const { smoothness, strongConvexity, heterogeneity } = entry.constants;
  if (smoothness === null || strongConvexity === null || entry.reference !== undefined) {
    store?.warn(`${where} is not an optimum; solving again`);
    return null;
  }
  return {
    problemHash,
    instance,
    reference: null,
    optimum: {
      x,
      loss: instance.global.loss(x),
      gradientNorm,
      iterations: entry.optimum.iterations,
    },
    constants: {
      smoothness,
      strongConvexity,
      conditionNumber: strongConvexity > 0 ? smoothness / strongConvexity : Infinity,
      heterogeneity,
    },
  };
}

function globalOf(instance: ProblemInstance): WeightedSumObjective {
  return instance.global instanceof WeightedSumObjective
    ? instance.global
    : new WeightedSumObjective(instance.objectives, instance.weights);
}

export function theoryOf(scenario: Scenario): PlanTheory {
  const problemHash = problemHashOf(scenario);
  const hit = cache.get(problemHash);
  if (hit) {
    cache.delete(problemHash);
    cache.set(problemHash, hit);
    return hit;
  }
  const instance = buildProblemInstance(scenario);
  const stored = store?.read(problemHash, ORACLE_VERSION) ?? null;
  if (scenario.problem.kind === 'perceptron') return referenceTheoryOf(scenario, instance, stored);
  const fromStore = stored && verified(problemHash, instance, stored);
  if (fromStore) {
    remember(fromStore);
    if (stored.details && stored.details.clients.length === instance.objectives.length)
      detailCache.set(problemHash, stored.details);
    return fromStore;
  }
  const optimum = solveOptimum(instance.global);
  const theory: PlanTheory = {
    problemHash,
    instance,
    optimum,
    constants: globalConstants(globalOf(instance), optimum.x),
    reference: null,
  };
  remember(theory);
  store?.write(problemHash, ORACLE_VERSION, toStored(theory, null));
  return theory;
}

/**
 * A nonconvex objective's theory: the reference run from the run's own start (reference-run.ts),
 * from the store when a stored one still holds (its loss recomputed at its point is the stored
 * loss, bit for bit, since the objective is deterministic), else run here and stored.
 */
function referenceTheoryOf(
  scenario: Scenario,
  instance: ProblemInstance,
  stored: StoredTheory | null,
): PlanTheory {
  const problemHash = problemHashOf(scenario);
  const global = globalOf(instance);
  const fromStore = stored && verifiedReference(problemHash, instance, stored);
  let theory: PlanTheory;
  if (fromStore) theory = fromStore;
  else {
    const start = initialModelOf({ scenario, dim: instance.dim });
    const run = referenceRun(global, start);
    theory = {
      problemHash,
      instance,
      optimum: {
        x: run.x,
        loss: run.loss,
        gradientNorm: run.gradientNorm,
        iterations: run.iterations,
      },
      constants: referenceConstants(global, run.x),
      reference: { iterationsMax: REFERENCE_ITERATIONS_MAX, ending: run.ending },
    };
    store?.write(problemHash, ORACLE_VERSION, toStored(theory, null));
  }
  remember(theory);
  return theory;
}

function verifiedReference(
  problemHash: string,
  instance: ProblemInstance,
  entry: StoredTheory,
): PlanTheory | null {
  const x = Float64Array.from(entry.optimum.x);
  const where = `the cached reference run for problem ${problemHash.slice(0, 12)}`;
  if (
    entry.reference === undefined ||
    entry.reference.iterationsMax !== REFERENCE_ITERATIONS_MAX ||
    x.length !== instance.dim ||
    !allFinite(x)
  ) {
    store?.warn(`${where} has the wrong shape or budget; running it again`);
    return null;
  }
  const loss = instance.global.loss(x);
  if (loss !== entry.optimum.loss) {
    store?.warn(`${where} does not reproduce its loss; running it again`);
    return null;
  }
  return {
    problemHash,
    instance,
    optimum: {
      x,
      loss,
      gradientNorm: entry.optimum.gradientNorm,
      iterations: entry.optimum.iterations,
    },
    constants: referenceConstants(globalOf(instance), x),
    reference: entry.reference,
  };
}

/**
 * A nonconvex objective has no L or mu over all x (NaN here: "none") and no x*; the heterogeneity
 * is sum_i p_i ||grad f_i||^2 at the reference point, the same quantity measured there.
 */
function referenceConstants(global: WeightedSumObjective, x: Float64Array): GlobalConstants {
  const gradient = new Float64Array(global.dim);
  let heterogeneity = 0;
  for (let i = 0; i < global.components.length; i++) {
    if (global.weights[i] === 0) continue;
    global.components[i].gradient(x, gradient);
    const norm = norm2(gradient);
    heterogeneity += global.weights[i] * norm * norm;
  }
  return {
    smoothness: Number.NaN,
    strongConvexity: Number.NaN,
    conditionNumber: Number.NaN,
    heterogeneity,
  };
}

/** The details if this process or the store already has them. */
export function knownTheoryDetails(theory: PlanTheory): TheoryDetails | null {
  return detailCache.get(theory.problemHash) ?? null;
}

/**
 * The details of `theory`, computed here (clients one after another) unless `clients` brings
 * them, e.g. from a thread pool; kept in memory and in the store.
 */
export function theoryDetailsOf(
  theory: PlanTheory,
  clients: ClientConstants[] | null = null,
): TheoryDetails {
  const known = knownTheoryDetails(theory);
  if (known) return known;
  const x = theory.optimum.x;
  const details: TheoryDetails = {
    hessianAtOptimum: curvatureAtOptimum(theory.instance.global, x),
    clients: clients ?? theory.instance.objectives.map((client) => clientConstants(client, x)),
  };
  detailCache.set(theory.problemHash, details);
  // A perceptron's client bounds are infinite (no L_i, mu_i), which the store's JSON cannot
  // hold: its details stay in this process and its stored entry keeps the reference alone.
  if (theory.reference === null)
    store?.write(theory.problemHash, ORACLE_VERSION, toStored(theory, details));
  return details;
}
