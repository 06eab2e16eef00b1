// One round of a method as a map of its full state, for predictions. It replays exactly the
// engine's arithmetic with no compression and full participation, which is where DESIGN.md's
// claim holds: for quadratic objectives with full gradients a round is an affine map.

import type { Method, Upload } from '../algorithm/method.js';
import { methodByName } from '../algorithm/registry.js';
import type { Objective } from '../problem/objective.js';
import type { RoundMap } from '../theory/affine-map.js';
import type { RunPlan } from './run-plan.js';
import { float64Leaves, flattenState, unflattenState } from './state-vector.js';
import { isLocalWorkExchange } from './round-schedule.js';
import { stepsUnderPolicy } from '../timing/round-policy.js';
import { keptCount } from '../compress/compressor.js';
import type { CompressorSpec } from '../scenario/schema.js';

interface FullState {
  server: unknown;
  clients: unknown[];
}

/** Why no prediction is made for a plan, or null when the round map is affine and fixed. */
export function predictionBlocker(plan: RunPlan): string | null {
  const s = plan.scenario;
  if (s.problem.kind !== 'least-squares') return 'the objective is not quadratic';
  if (s.method.gradient !== 'full') return 'minibatch gradients make the round map random';
  if (s.method.participation < 1) return 'partial participation makes the round map random';
  // A compressor that keeps every entry at full width is the identity (top-k or rand-k with
  // k = d, unscaled since d/k = 1), so a "dense" rung of a compression sweep is still predicted.
  const exact = (c: CompressorSpec) => c.values === 'f64' && keptCount(plan.dim, c) >= plan.dim;
  const channels = [s.compression.uplink, s.compression.downlink];
  if (!channels.every((ch) => exact(ch.default) && Object.values(ch.fields).every(exact))) return 'compression makes the round map nonlinear';
  if (s.timing.policy.kind === 'fastest-k') return 'fastest-k drops updates by timing';
  if (s.timing.policy.kind === 'deadline' && (s.timing.jitter > 0 || s.timing.transient.probability > 0)) return 'a deadline with jitter changes tau_i every round';
  return null;
}

/** tau_i per client as the engine would decide it (deadline without jitter: the same every round). */
function stepsPerClient(plan: RunPlan, stepSeconds: (clientId: number) => number): number[] {
  return Array.from({ length: plan.clientCount }, (_, i) => stepsUnderPolicy(plan.scenario.timing.policy, stepSeconds(i), plan.plannedSteps[i]));
}

export interface PlanRoundMap {
  map: RoundMap;
  /** the state after one round from the initial model (leaves flags such as "started" set) */
  start: Float64Array;
  /** where the server model x sits in the state vector */
  modelOf(state: Float64Array): Float64Array;
}

export function buildRoundMap(plan: RunPlan, objectives: readonly Objective[], stepSeconds: (clientId: number) => number, initialModel: Float64Array): PlanRoundMap {
  const method: Method = methodByName(plan.scenario.method.name);
  const steps = stepsPerClient(plan, stepSeconds);
  const eta = plan.methodConfig.stepSize;
  const inverse = plan.scenario.method.stepPolicy === 'inverse-steps';

  const runRound = (state: FullState): void => {
    for (const exchange of method.exchanges) {
      const localWork = isLocalWorkExchange(method.exchanges, exchange);
      const down = method.broadcast(state.server, exchange);
      const uploads: Upload[] = [];
      for (let i = 0; i < plan.clientCount; i++) {
        const tau = localWork ? steps[i] : 1;
        const stepSize = inverse ? eta / tau : eta;
        const fields = method.work(state.clients[i], objectives[i], down, { localSteps: tau, stepSize, sampler: null }, exchange);
        const taken = method.stepsTaken ? method.stepsTaken(state.clients[i]) : tau;
        uploads.push({ clientId: i, weight: plan.weights[i], localSteps: taken, stepSize, fields });
      }
      method.aggregate(state.server, uploads, exchange);
    }
  };

  const template: FullState = {
    server: method.initServer(plan.dim, plan.methodConfig, initialModel),
    clients: Array.from({ length: plan.clientCount }, (_, i) => method.initClient(plan.dim, plan.methodConfig, i)),
  };
  runRound(template);
  const map: RoundMap = (vector) => {
    const state = unflattenState(template, vector);
    runRound(state);
    return flattenState(state);
  };
  // The model's position: perturb nothing, read the server's model leaf by identity.
  const probe = unflattenState(template, flattenState(template));
  const modelLeaf = method.model(probe.server);
  const full = flattenState(probe);
  let modelOffset = -1;
  let offset = 0;
  for (const leaf of float64Leaves(probe)) {
    if (leaf === modelLeaf) modelOffset = offset;
    offset += leaf.length;
  }
  if (modelOffset < 0 || full.length !== offset) throw new Error('the server model is not a Float64Array leaf of the method state');
  return {
    map,
    start: flattenState(template),
    modelOf: (state) => state.slice(modelOffset, modelOffset + plan.dim),
  };
}
