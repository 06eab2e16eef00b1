// A perceptron's starting point. Zero is a saddle of every perceptron (all hidden units of a
// layer then get the same gradient and stay equal, and with tanh only the output biases get a
// gradient at all), so training starts from seeded random weights:
// the normalized initialization of Glorot and Bengio ("Understanding the difficulty of training
// deep feedforward neural networks", AISTATS 2010, eq. 16), W_l uniform on
// [-sqrt(6 / (inputs + outputs)), +sqrt(6 / (inputs + outputs))], which keeps the activations'
// and the back-propagated gradients' variances about equal from layer to layer for tanh; biases
// start at zero. Each layer draws from its own stream, so the start is a pure function of the
// seed and the layout, the same in every process.

import { Rng } from '../base/rng.js';
import type { LayerSpan } from './perceptron-layout.js';

export function glorotUniformStart(
  seed: number,
  layers: readonly LayerSpan[],
  dim: number,
): Float64Array {
  const x = new Float64Array(dim);
  layers.forEach((span, l) => {
    const rng = Rng.derive(seed, 'initial-model', l);
    const limit = Math.sqrt(6 / (span.inputs + span.outputs));
    const weights = span.inputs * span.outputs;
    for (let k = 0; k < weights; k++) x[span.weightAt + k] = limit * (2 * rng.nextFloat() - 1);
  });
  return x;
}
