// Every random stream of a run, named in one place, so that the engine, the coordinator and the
// workers draw exactly the same numbers for the same (round, exchange, client, field). The data
// draws from its own seed (scenario/data-seed.ts), so these can vary over fixed data.

import { Rng } from '../base/rng.js';
import type { RngForField } from '../compress/channel.js';

export function minibatchRng(seed: number, clientId: number, round: number, exchange: string): Rng {
  return Rng.derive(seed, 'minibatch', clientId, round, exchange);
}

export function uplinkRngFor(
  seed: number,
  clientId: number,
  round: number,
  exchange: string,
): RngForField {
  return (field) => Rng.derive(seed, 'compress-up', clientId, round, exchange, field);
}

export function downlinkRngFor(
  seed: number,
  clientId: number,
  round: number,
  exchange: string,
): RngForField {
  return (field) => Rng.derive(seed, 'compress-down', clientId, round, exchange, field);
}
