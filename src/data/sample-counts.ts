// How many samples each client holds (n_i), from the scenario's samplesPerClient. Quantity skew
// comes from a list (one count per client) or from a seeded uniform range; each client's count
// is a pure function of (spec, client count, seed, client id), so any process computes it alone.

import type { CountSpec } from '../scenario/schema.js';
import { DataError } from './data-error.js';
import { Rng } from '../base/rng.js';

export function samplesForClient(
  spec: CountSpec,
  clientCount: number,
  seed: number,
  clientId: number,
): number {
  if (!Number.isInteger(clientId) || clientId < 0 || clientId >= clientCount) {
    throw new DataError('E_DATA_SPEC', `client id ${clientId} is outside [0, ${clientCount})`);
  }
  if (typeof spec === 'number') return spec;
  if (Array.isArray(spec)) {
    if (spec.length !== clientCount) {
      throw new DataError(
        'E_DATA_SPEC',
        `data.samplesPerClient lists ${spec.length} counts but there are ${clientCount} clients`,
        'data.samplesPerClient',
      );
    }
    return spec[clientId];
  }
  const [min, max] = spec.uniform;
  return min + Rng.derive(seed, 'samples', clientId).nextInt(max - min + 1);
}

/** n_i for every client, in client order. */
export function samplesForAllClients(spec: CountSpec, clientCount: number, seed: number): number[] {
  return Array.from({ length: clientCount }, (_, clientId) =>
    samplesForClient(spec, clientCount, seed, clientId),
  );
}
