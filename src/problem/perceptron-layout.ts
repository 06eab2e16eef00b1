// Where each layer's weights and biases sit in a perceptron's flat parameter vector x.
//
// Layer l (l = 0 .. layerCount - 1) maps widths[l] inputs to widths[l + 1] outputs, with
// widths = [features, hidden..., classes]. The vector holds the layers in order from the input
// to the output; each layer is its weight matrix W_l, row-major (row o holds the weights into
// unit o, so W_l[o][i] is x[weightAt + o * inputs + i]), followed by its bias b_l (widths[l + 1]
// entries). The order never changes with the runtime, so a model file or a checkpoint written by
// one reads the same in the other.

import { SCENARIO_LIMITS } from '../scenario/schema.js';
import { ProblemError } from './problem-error.js';

const { hiddenLayersMax, hiddenWidthMax } = SCENARIO_LIMITS;

export interface LayerSpan {
  inputs: number;
  outputs: number;
  /** index in x of W_l[0][0] */
  weightAt: number;
  /** index in x of b_l[0] */
  biasAt: number;
}

/** Parameters of a perceptron: sum over layers of (inputs + 1) x outputs. */
export function perceptronParameterCount(
  featureCount: number,
  hiddenWidths: readonly number[],
  classCount: number,
): number {
  const widths = [featureCount, ...hiddenWidths, classCount];
  let total = 0;
  for (let l = 0; l + 1 < widths.length; l++) total += (widths[l] + 1) * widths[l + 1];
  return total;
}

/** The spans of every layer, from the input to the output. */
export function perceptronLayout(
  featureCount: number,
  hiddenWidths: readonly number[],
  classCount: number,
): LayerSpan[] {
  if (hiddenWidths.length < 1 || hiddenWidths.length > hiddenLayersMax) {
    throw new ProblemError(
      'E_PROBLEM_SPEC',
      `a perceptron needs 1 to ${hiddenLayersMax} hidden layers, got ${hiddenWidths.length}`,
    );
  }
  for (const width of hiddenWidths) {
    if (!Number.isInteger(width) || width < 1 || width > hiddenWidthMax) {
      throw new ProblemError(
        'E_PROBLEM_SPEC',
        `a hidden layer's width must be an integer in [1, ${hiddenWidthMax}], got ${width}`,
      );
    }
  }
  const widths = [featureCount, ...hiddenWidths, classCount];
  const spans: LayerSpan[] = [];
  let at = 0;
  for (let l = 0; l + 1 < widths.length; l++) {
    const inputs = widths[l];
    const outputs = widths[l + 1];
    spans.push({ inputs, outputs, weightAt: at, biasAt: at + inputs * outputs });
    at += (inputs + 1) * outputs;
  }
  return spans;
}

/**
 * The layout of a perceptron whose parameter count is `dim`: the feature count is the one
 * unknown, and dim is affine in it, (features + 1) x hiddenWidths[0] + the rest. A plan carries
 * the dimension, not the feature count (a data set's is known only once loaded), so a process
 * that holds only the plan recovers the layout from it.
 */
export function perceptronLayoutOfDimension(
  dim: number,
  hiddenWidths: readonly number[],
  classCount: number,
): LayerSpan[] {
  const rest = perceptronParameterCount(0, hiddenWidths, classCount) - hiddenWidths[0];
  const featureCount = (dim - rest) / hiddenWidths[0] - 1;
  if (!Number.isInteger(featureCount) || featureCount < 1) {
    throw new ProblemError(
      'E_PROBLEM_DIMENSION',
      `no perceptron of hidden widths [${hiddenWidths.join(', ')}] and ${classCount} classes has ${dim} parameters`,
    );
  }
  return perceptronLayout(featureCount, hiddenWidths, classCount);
}
