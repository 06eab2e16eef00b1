// Link model: a message of b bytes takes latencySeconds + b / bandwidth to cross, one way.
// Every client has the same link for now (the scenario gives one); a message of zero bytes still
// pays the latency, since a message still has to travel.

import type { Scenario } from '../scenario/schema.js';
import { assertFiniteAtLeast } from './errors.js';

export type LinkModel = Scenario['timing']['links'];

function transferSeconds(bytes: number, bytesPerSecond: number, latencySeconds: number): number {
  assertFiniteAtLeast('bytes', bytes, 0);
  return latencySeconds + bytes / bytesPerSecond;
}

/** Seconds for `bytes` to go from the server to a client. */
export function downlinkSecondsFor(link: LinkModel, bytes: number): number {
  return transferSeconds(bytes, link.downlinkBytesPerSecond, link.latencySeconds);
}

/** Seconds for `bytes` to go from a client to the server. */
export function uplinkSecondsFor(link: LinkModel, bytes: number): number {
  return transferSeconds(bytes, link.uplinkBytesPerSecond, link.latencySeconds);
}
