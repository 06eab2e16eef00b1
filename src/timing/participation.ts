// Who takes part in a round: a seeded sample without replacement, drawn from
// Rng.derive(seed, 'participants', round) so that every process agrees on it without talking.

import { Rng } from '../base/rng.js';
import { TimingError, assertIntegerInRange } from './errors.js';

/** Participants per round for a fraction of m clients: max(1, round(fraction m)), half rounding up. */
export function participantCount(fraction: number, clientCount: number): number {
  assertIntegerInRange('clientCount', clientCount, 1, 2 ** 32 - 1);
  if (!(fraction > 0 && fraction <= 1)) {
    throw new TimingError(
      'E_TIMING_ARGUMENT',
      `participation must lie in (0, 1], got ${fraction}`,
      'method.participation',
    );
  }
  return Math.max(1, Math.min(clientCount, Math.round(fraction * clientCount)));
}

/** The client ids taking part in `round`, sorted ascending. */
export function participantsFor(
  fraction: number,
  clientCount: number,
  seed: number,
  round: number,
): Uint32Array {
  const count = participantCount(fraction, clientCount);
  assertIntegerInRange('round', round, 0, Number.MAX_SAFE_INTEGER);
  if (count === clientCount) return Uint32Array.from({ length: clientCount }, (_, i) => i);
  return Rng.derive(seed, 'participants', round).sampleWithoutReplacement(clientCount, count);
}
