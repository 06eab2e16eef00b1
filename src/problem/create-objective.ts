// Builds a client's objective from the problem specification and its shard: the one place that
// maps a problem kind to its implementation.

import type { Shard } from './shard.js';
import { LeastSquaresObjective } from './least-squares.js';
import { LogisticObjective } from './logistic.js';
import type { ClientObjective, ObjectiveSpec } from './objective.js';
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
    default: {
      const unknown: never = spec.kind;
      throw new ProblemError('E_PROBLEM_SPEC', `unknown problem kind ${String(unknown)}`);
    }
  }
}
