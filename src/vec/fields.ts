// Named vectors: what a method broadcasts, uploads or keeps per field ("model", "delta", ...).

/** Named vectors that cross the wire in one direction of one exchange. */
export type Fields = Record<string, Float64Array>;
