// One round of a method as a map of its full state, for predictions: the round walk itself
// (round-walk.ts), over the plan's ideal twin (no compression, full participation) with direct
// calls, so that participants, tau_i and eta_i are decided by the very code a run uses. This is
// where DESIGN.md's claim holds: for quadratic objectives with full gradients a round is an
// affine map.

import type { Objective } from '../problem/objective.js';
import type { RoundMap } from '../theory/affine-map.js';
import { keptCount } from '../compress/compressor.js';
import type { CompressorSpec } from '../scenario/schema.js';
import { ClientRuntime } from './client-runtime.js';
import { DirectTransport } from './direct-transport.js';
import { idealPlan } from './ideal-plan.js';
import { walkRound, walkSetup } from './round-walk.js';
import type { RunPlan } from './run-plan.js';
import { ServerRuntime } from './server-runtime.js';
import { float64Leaves, flattenState, unflattenState } from './state-vector.js';
import { driveSync } from './walk-transport.js';
import { NONCONVEX_BLOCKER } from './trajectory-blocker.js';

interface FullState {
  server: unknown;
  clients: unknown[];
}

/**
 * The round the map walks every time. Where a prediction is made the step times, and with them
 * tau_i, are the same every round (no jitter, no transient stragglers under a deadline), and
 * nothing else that depends on the round number (minibatches, rand-k draws, participant draws)
 * is in play.
 */
const MAP_ROUND = 1;

/** Why no prediction is made for a plan, or null when the round map is affine and fixed. */
export function predictionBlocker(plan: Pick<RunPlan, 'scenario' | 'dim'>): string | null {
  if (plan.scenario.problem.kind === 'perceptron') return NONCONVEX_BLOCKER;
  if (plan.scenario.problem.kind !== 'least-squares') return 'the objective is not quadratic';
  return roundMapChangeBlocker(plan);
}

/**
 * Why the round map is random or changes from round to round whatever the objective, or null:
 * the exact (affine) and the local (linearized) predictions both need one fixed map.
 */
export function roundMapChangeBlocker(plan: Pick<RunPlan, 'scenario' | 'dim'>): string | null {
  const s = plan.scenario;
  if (s.method.gradient !== 'full') return 'minibatch gradients make the round map random';
  if (s.method.participation < 1) return 'partial participation makes the round map random';
  // A compressor that keeps every entry at full width is the identity (top-k or rand-k with
  // k = d, unscaled since d/k = 1), so a "dense" rung of a compression sweep is still predicted.
  const exact = (c: CompressorSpec) => c.values === 'f64' && keptCount(plan.dim, c) >= plan.dim;
  const channels = [s.compression.uplink, s.compression.downlink];
  if (!channels.every((ch) => exact(ch.default) && Object.values(ch.fields).every(exact)))
    return 'compression makes the round map nonlinear';
  if (s.timing.policy.kind === 'fastest-k') return 'fastest-k drops updates by timing';
  if (
    s.timing.policy.kind === 'deadline' &&
    (s.timing.jitter > 0 || s.timing.transient.probability > 0)
  )
    return 'a deadline with jitter changes tau_i every round';
  return null;
}

export interface PlanRoundMap {
  map: RoundMap;
  /** the state after one round from the initial model (leaves flags such as "started" set) */
  start: Float64Array;
  /** where the server model x sits in the state vector */
  modelOf(state: Float64Array): Float64Array;
  /** the method states' shape (server and clients) whose Float64Array leaves the vector holds */
  template: unknown;
}

/** Runtimes over the ideal plan that walk one round from a method state they adopt. */
function stateWalker(
  plan: RunPlan,
  objectives: readonly Objective[],
  initialModel: Float64Array,
): { server: ServerRuntime; stateNow(): FullState; runRound(state: FullState): FullState } {
  const ideal = idealPlan(plan);
  const server = new ServerRuntime(ideal, initialModel);
  const clients = objectives.map((objective, id) => new ClientRuntime(ideal, id, objective));
  const setup = walkSetup(ideal, server);
  const transport = new DirectTransport(clients);
  const stateNow = (): FullState => ({
    server: server.methodState(),
    clients: clients.map((c) => c.methodState()),
  });
  const runRound = (state: FullState): FullState => {
    server.adoptMethodState(state.server);
    state.clients.forEach((s, i) => clients[i].adoptMethodState(s));
    driveSync(walkRound(setup, MAP_ROUND), transport);
    return stateNow();
  };
  return { server, stateNow, runRound };
}

/**
 * The round map of `plan` over other objectives than the problem's own, on states shaped like
 * `template` (a PlanRoundMap's): the linearized round walks the very same code on objectives
 * whose gradient is a Hessian-vector product (round-map-jacobian.ts).
 */
export function roundMapOver(
  plan: RunPlan,
  objectives: readonly Objective[],
  template: unknown,
): RoundMap {
  const { runRound } = stateWalker(plan, objectives, new Float64Array(plan.dim));
  return (vector) =>
    flattenState(runRound(unflattenState(template as FullState, vector) as FullState));
}

export function buildRoundMap(
  plan: RunPlan,
  objectives: readonly Objective[],
  initialModel: Float64Array,
): PlanRoundMap {
  const { server, stateNow, runRound } = stateWalker(plan, objectives, initialModel);
  const template = structuredClone(runRound(stateNow()));
  const map: RoundMap = (vector) => flattenState(runRound(unflattenState(template, vector)));
  // The model's position: read the server's model leaf by identity.
  const probe = unflattenState(template, flattenState(template));
  const modelLeaf = server.method.model(probe.server);
  const full = flattenState(probe);
  let modelOffset = -1;
  let offset = 0;
  for (const leaf of float64Leaves(probe)) {
    if (leaf === modelLeaf) modelOffset = offset;
    offset += leaf.length;
  }
  if (modelOffset < 0 || full.length !== offset)
    throw new Error('the server model is not a Float64Array leaf of the method state');
  return {
    map,
    start: flattenState(template),
    modelOf: (state) => state.slice(modelOffset, modelOffset + plan.dim),
    template,
  };
}
