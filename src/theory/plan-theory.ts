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
import { buildProblemInstance, type ProblemInstance } from '../data/problem-instance.js';
import { WeightedSumObjective } from '../problem/weighted-sum.js';
import { allFinite, norm2 } from '../vec/kernels.js';
import { ORACLE_VERSION, solveOptimum } from './oracle.js';
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
  optimum: OptimumCertificate;
  constants: GlobalConstants;
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
  constants: { smoothness: number; strongConvexity: number; heterogeneity: number };
  details: TheoryDetails | null;
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
    seed: scenario.seed,
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
  return {
    optimum: { x: Array.from(x), loss, gradientNorm, iterations },
    constants: { smoothness, strongConvexity, heterogeneity },
    details,
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
  return {
    problemHash,
    instance,
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
  };
  remember(theory);
  store?.write(problemHash, ORACLE_VERSION, toStored(theory, null));
  return theory;
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
  store?.write(theory.problemHash, ORACLE_VERSION, toStored(theory, details));
  return details;
}
