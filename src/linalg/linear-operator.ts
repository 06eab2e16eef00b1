// A linear map given only by its action: the one shape every Krylov method here takes.

export type LinearOperator = (v: Float64Array) => Float64Array;
