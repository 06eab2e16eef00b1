// Persistent slowdowns: each client's s_i >= 1, drawn once per run, multiplies the base step cost
// in every round. A factor below 1 would make a client faster than the base cost, which the base
// cost is defined to exclude (it is the fastest device's step time).
//
// Every client draws from its own stream Rng.derive(seed, 'slowdown', clientId), so a process can
// rebuild one client's value without the others, and adding clients leaves existing values alone.
// Only two-class needs a joint choice (exactly round(fraction m) stragglers); it draws that set
// from Rng.derive(seed, 'slowdown', 'stragglers').
//
// Definitions (each keeps s_i >= 1):
// - constant(value): s = value.
// - uniform(min, max): s = min + (max - min) U, U ~ U[0, 1).
// - lognormal(sigma): s = exp(sigma |Z|), Z ~ N(0, 1): log s is half-normal with scale sigma, so
//   sigma = 0 gives s = 1 and the median is exp(0.6745 sigma). Mean 2 exp(sigma^2/2) Phi(sigma)
//   (the moment generating function of the half-normal distribution).
// - pareto(shape a): scale 1, s = (1 - U)^(-1/a); P(s > t) = t^(-a) for t >= 1. Mean a/(a-1) for a > 1.
// - two-class(fraction, factor): round(fraction m) clients (half rounds up) have s = factor, the
//   rest s = 1.

import { Rng } from '../base/rng.js';
import type { Scenario } from '../scenario/schema.js';
import { TimingError, assertIntegerInRange } from './errors.js';

export type SlowdownSpec = Scenario['timing']['slowdown'];

/** Bound on clients: the schema allows 10,000; the headroom serves studies of the models alone. */
const clientsMax = 1_000_000;

/** Number of stragglers of a two-class mix over `clientCount` clients. */
export function stragglerCount(fraction: number, clientCount: number): number {
  return Math.min(clientCount, Math.round(fraction * clientCount));
}

type SingleDrawSpec = Exclude<SlowdownSpec, { kind: 'two-class' }>;

function drawOne(spec: SingleDrawSpec, rng: Rng): number {
  switch (spec.kind) {
    case 'constant':
      return spec.value;
    case 'uniform':
      return spec.min + (spec.max - spec.min) * rng.nextFloat();
    case 'lognormal':
      return Math.exp(spec.sigma * Math.abs(rng.normal()));
    case 'pareto':
      // 1 - U lies in (0, 1], so s >= 1 and the power never divides by zero.
      return Math.pow(1 - rng.nextFloat(), -1 / spec.shape);
  }
}

/** s_i for every client 0..clientCount-1 of a run with this plan seed. */
export function drawSlowdowns(
  timing: { slowdown: SlowdownSpec },
  clientCount: number,
  seed: number,
): Float64Array {
  assertIntegerInRange('clientCount', clientCount, 1, clientsMax);
  const spec = timing.slowdown;
  const slowdowns = new Float64Array(clientCount);
  if (spec.kind === 'two-class') {
    slowdowns.fill(1);
    const count = stragglerCount(spec.fraction, clientCount);
    const stragglers = Rng.derive(seed, 'slowdown', 'stragglers').sampleWithoutReplacement(
      clientCount,
      count,
    );
    for (let j = 0; j < stragglers.length; j++) slowdowns[stragglers[j]] = spec.factor;
    return slowdowns;
  }
  for (let i = 0; i < clientCount; i++) {
    const s = drawOne(spec, Rng.derive(seed, 'slowdown', i));
    // A pareto shape far below 1 can overflow to Infinity; no round could then end.
    if (!Number.isFinite(s)) {
      throw new TimingError(
        'E_TIMING_SLOWDOWN_NOT_FINITE',
        `client ${i} drew slowdown ${s}; choose a larger shape`,
        'timing.slowdown',
      );
    }
    slowdowns[i] = s;
  }
  return slowdowns;
}
