// A model scored on an objective's samples, for the held-out evaluation: the data loss summed
// over the samples (the regularizer is a property of training, not of a prediction) and how
// many samples a classifier labels right. Sums, not means, so that clients' parts pool exactly.

export interface SampleScore {
  /** sum over the samples of loss(x; a_s, b_s), without the L2 term */
  lossSum: number;
  /** samples whose predicted label is the true one (always 0 for least squares) */
  correctCount: number;
}

/**
 * Adds one sample's cross-entropy and hit to `score`, its class scores read at
 * logits[offset + c * stride]. The predicted label is the highest score, ties to the lowest class.
 */
export function addLogitsScore(
  score: SampleScore,
  logits: Float64Array,
  offset: number,
  stride: number,
  classCount: number,
  label: number,
): void {
  let largest = -Infinity;
  let predicted = 0;
  for (let c = 0; c < classCount; c++) {
    const z = logits[offset + c * stride];
    if (z > largest) {
      largest = z;
      predicted = c;
    }
  }
  let total = 0;
  for (let c = 0; c < classCount; c++) total += Math.exp(logits[offset + c * stride] - largest);
  // logsumexp(z) - z_b = (max - z_b) + log sum exp(z - max), as in the objectives' loss.
  score.lossSum += largest - logits[offset + label * stride] + Math.log(total);
  if (predicted === label) score.correctCount++;
}
