// The model scored on the clients' test parts (src/data/test-part.ts), every evaluated round, in
// both runtimes alike: the in-process engine and the coordinator's oracle thread each build one
// HeldOutSet from the same test shards. Pooled numbers are over the union of the test parts;
// per-client accuracy is each client's own share right, summarised over the clients that hold
// out at least one row as their mean, the worst client (lowest, ties to the lower id) and the
// range (best minus worst).

import { createObjective } from '../problem/create-objective.js';
import type { ClientObjective, ObjectiveSpec } from '../problem/objective.js';
import type { Shard } from '../problem/shard.js';

export interface HeldOutEvaluation {
  /** the data loss (no L2 term) averaged over the pooled test rows */
  loss: number;
  /** classifiers: the share of pooled test rows labelled right; null for least squares */
  accuracy: number | null;
  /** classifiers: per-client accuracy summarised over clients; null for least squares */
  clientAccuracy: {
    mean: number;
    worst: number;
    worstClientId: number;
    /** best minus worst */
    range: number;
  } | null;
}

export class HeldOutSet {
  private readonly objectives: ClientObjective[];
  private readonly classifies: boolean;
  readonly rowCount: number;

  /** testShards: every client's test part, in client order (empty ones are skipped). */
  constructor(spec: ObjectiveSpec, testShards: readonly Shard[]) {
    this.objectives = testShards
      .filter((shard) => shard.sampleCount > 0)
      .map((shard) => createObjective(spec, shard));
    this.classifies = spec.kind !== 'least-squares';
    this.rowCount = this.objectives.reduce((sum, o) => sum + o.sampleCount, 0);
  }

  /** The scores of model x; null when no client holds a row out. */
  evaluate(x: Float64Array): HeldOutEvaluation | null {
    if (this.rowCount === 0) return null;
    let lossSum = 0;
    let correct = 0;
    let accuracySum = 0;
    let worst = Infinity;
    let best = -Infinity;
    let worstClientId = -1;
    for (const objective of this.objectives) {
      const score = objective.sampleScore(x);
      lossSum += score.lossSum;
      correct += score.correctCount;
      const accuracy = score.correctCount / objective.sampleCount;
      accuracySum += accuracy;
      if (accuracy < worst) {
        worst = accuracy;
        worstClientId = objective.shard.clientId;
      }
      if (accuracy > best) best = accuracy;
    }
    const loss = lossSum / this.rowCount;
    if (!this.classifies) return { loss, accuracy: null, clientAccuracy: null };
    return {
      loss,
      accuracy: correct / this.rowCount,
      clientAccuracy: {
        mean: accuracySum / this.objectives.length,
        worst,
        worstClientId,
        range: best - worst,
      },
    };
  }
}
