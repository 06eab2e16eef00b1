// Upload weights p_i are shares of all m clients; an average over the clients that took part
// in a round needs them rescaled to sum to one over those participants.

import type { Upload } from './method.js';

/** p_i / sum_{j in S} p_j for every upload, in upload order. */
export function renormalizedWeights(uploads: readonly Upload[]): Float64Array {
  let total = 0;
  for (const upload of uploads) total += upload.weight;
  const weights = new Float64Array(uploads.length);
  for (let i = 0; i < uploads.length; i++) weights[i] = uploads[i].weight / total;
  return weights;
}

/** out <- sum_i coefficients[i] * uploads[i].fields[name]; fields already checked by assertUploads. */
export function weightedFieldSum(
  uploads: readonly Upload[],
  coefficients: Float64Array,
  name: string,
  out: Float64Array,
): void {
  out.fill(0);
  for (let i = 0; i < uploads.length; i++) {
    const v = uploads[i].fields[name];
    const a = coefficients[i];
    for (let j = 0; j < out.length; j++) out[j] += a * v[j];
  }
}
