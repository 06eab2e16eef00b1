// Link model: a message of b bytes takes latencySeconds + b / bandwidth to cross, one way; a
// message of zero bytes still pays the latency, since a message still has to travel.
//
// Each client has its own link. Each of the three quantities (uplink and downlink bandwidth,
// latency) is given as one value for every client, a list with one value per client, or a seeded
// draw per client:
// - uniform(min, max): min + (max - min) U, U ~ U[0, 1).
// - lognormal(median, sigma): median exp(sigma Z), Z ~ N(0, 1), so half the clients lie on
//   either side of the median and sigma = 0 gives every client the median.
// Client i's draw of a quantity comes from Rng.derive(seed, 'link', quantity, i), so a process
// rebuilds one client's link without the others, and the three quantities are independent.

import { Rng } from '../base/rng.js';
import type { LinkValueSpec, Scenario } from '../scenario/schema.js';
import { TimingError, assertFiniteAtLeast, assertIntegerInRange } from './errors.js';

export type LinksSpec = Scenario['timing']['links'];

/** One client's link. */
export interface ClientLink {
  readonly uplinkBytesPerSecond: number;
  readonly downlinkBytesPerSecond: number;
  readonly latencySeconds: number;
}

const quantities = ['uplinkBytesPerSecond', 'downlinkBytesPerSecond', 'latencySeconds'] as const;
type Quantity = (typeof quantities)[number];

function drawValue(spec: Exclude<LinkValueSpec, number | number[]>, rng: Rng): number {
  switch (spec.kind) {
    case 'uniform':
      return spec.min + (spec.max - spec.min) * rng.nextFloat();
    case 'lognormal':
      return spec.median * Math.exp(spec.sigma * rng.normal());
  }
}

function valuesOf(
  quantity: Quantity,
  spec: LinkValueSpec,
  clientCount: number,
  seed: number,
): Float64Array {
  const values = new Float64Array(clientCount);
  if (typeof spec === 'number') values.fill(spec);
  else if (Array.isArray(spec)) {
    if (spec.length !== clientCount)
      throw new TimingError(
        'E_TIMING_LINKS_LENGTH',
        `timing.links.${quantity} lists ${spec.length} values but there are ${clientCount} clients; give one per client`,
        `timing.links.${quantity}`,
      );
    values.set(spec);
  } else
    for (let i = 0; i < clientCount; i++)
      values[i] = drawValue(spec, Rng.derive(seed, 'link', quantity, i));
  const least = quantity === 'latencySeconds' ? 0 : Number.MIN_VALUE;
  values.forEach((v, i) => {
    // A lognormal of a huge sigma can overflow or underflow; no message could then be priced.
    if (!Number.isFinite(v) || v < least)
      throw new TimingError(
        'E_TIMING_LINK_NOT_FINITE',
        `timing.links.${quantity}: client ${i} has ${v}; choose a smaller sigma`,
        `timing.links.${quantity}`,
      );
  });
  return values;
}

/** The link of every client 0..clientCount-1 of a run with this plan seed. */
export function drawLinks(spec: LinksSpec, clientCount: number, seed: number): ClientLink[] {
  assertIntegerInRange('clientCount', clientCount, 1, 2 ** 31 - 1);
  const [up, down, latency] = quantities.map((q) => valuesOf(q, spec[q], clientCount, seed));
  return Array.from({ length: clientCount }, (_, i) => ({
    uplinkBytesPerSecond: up[i],
    downlinkBytesPerSecond: down[i],
    latencySeconds: latency[i],
  }));
}

function transferSeconds(bytes: number, bytesPerSecond: number, latencySeconds: number): number {
  assertFiniteAtLeast('bytes', bytes, 0);
  return latencySeconds + bytes / bytesPerSecond;
}

/** Seconds for `bytes` to go from the server to a client. */
export function downlinkSecondsFor(link: ClientLink, bytes: number): number {
  return transferSeconds(bytes, link.downlinkBytesPerSecond, link.latencySeconds);
}

/** Seconds for `bytes` to go from a client to the server. */
export function uplinkSecondsFor(link: ClientLink, bytes: number): number {
  return transferSeconds(bytes, link.uplinkBytesPerSecond, link.latencySeconds);
}
