// Builds a client's objective from the problem specification and its shard: the one place that
// maps a problem kind to its implementation.

import type { Shard } from './shard.js';
import { LeastSquaresObjective } from './least-squares.js';
import { LogisticObjective } from './logistic.js';
import type { ClientObjective, ObjectiveSpec } from './objective.js';
import { PerceptronObjective } from './perceptron.js';
import { ProblemError } from './problem-error.js';
import { SoftmaxObjective } from './softmax.js';

export function createObjective(spec: ObjectiveSpec, shard: Shard): ClientObjective {
  switch (spec.kind) {
    case 'least-squares':
      return new LeastSquaresObjective(shard, spec.regularization);
    case 'logistic':
      return new LogisticObjective(shard, spec.regularization);
    case 'softmax':
      if (spec.classes === undefined)
        throw new ProblemError('E_PROBLEM_SPEC', 'a softmax objective needs a class count');
      return new SoftmaxObjective(shard, spec.regularization, spec.classes);
    case 'perceptron':
      if (
        spec.classes === undefined ||
        spec.hiddenWidths === undefined ||
        spec.activation === undefined
      )
        throw new ProblemError(
          'E_PROBLEM_SPEC',
          'a perceptron objective needs a class count, hidden widths and an activation',
        );
      return new PerceptronObjective(shard, spec.regularization, {
        classCount: spec.classes,
        hiddenWidths: spec.hiddenWidths,
        activation: spec.activation,
      });
    default: {
      const unknown: never = spec.kind;
      throw new ProblemError('E_PROBLEM_SPEC', `unknown problem kind ${String(unknown)}`);
    }
  }
}
