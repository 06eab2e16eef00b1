// The smooth activations a perceptron's hidden units may use. Both are twice continuously
// differentiable, so that the Hessian exists everywhere and the R-operator's second pass
// (perceptron.ts) needs the second derivative as well as the first.

export type ActivationName = 'tanh' | 'softplus';

export interface Activation {
  readonly name: ActivationName;
  /** sigma(z) */
  value(z: number): number;
  /** sigma'(z) */
  slope(z: number): number;
  /** sigma''(z) */
  curvature(z: number): number;
}

const tanh: Activation = {
  name: 'tanh',
  value: (z) => Math.tanh(z),
  slope: (z) => {
    const t = Math.tanh(z);
    return 1 - t * t;
  },
  curvature: (z) => {
    const t = Math.tanh(z);
    return -2 * t * (1 - t * t);
  },
};

/** 1 / (1 + e^{-z}) without overflow on either side. */
function logistic(z: number): number {
  if (z >= 0) return 1 / (1 + Math.exp(-z));
  const e = Math.exp(z);
  return e / (1 + e);
}

const softplus: Activation = {
  name: 'softplus',
  // log(1 + e^z) = max(z, 0) + log(1 + e^{-|z|}): no overflow for large z, no lost digits for
  // very negative z.
  value: (z) => Math.max(z, 0) + Math.log1p(Math.exp(-Math.abs(z))),
  slope: logistic,
  curvature: (z) => {
    const s = logistic(z);
    return s * (1 - s);
  },
};

export function activationByName(name: ActivationName): Activation {
  return name === 'tanh' ? tanh : softplus;
}
