// A client's private data. Rows are samples, row-major; targets are real values for least
// squares, 0/1 for logistic, class indices for softmax.

export interface Shard {
  readonly clientId: number;
  readonly sampleCount: number;
  readonly featureCount: number;
  /** sampleCount x featureCount, row-major */
  readonly features: Float64Array;
  readonly targets: Float64Array;
}
