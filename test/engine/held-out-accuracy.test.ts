// The held-out accuracy the digits must show (issue 13), on the bundled digit federation
// (scenarios/digit-label-skew.yaml: 20 clients, Dirichlet(0.3) label skew) with a fifth of each
// client's rows held out, so that every model below is scored on the same 2,000-odd test digits
// (the whole pooled test set, every time):
// - softmax trained on the pooled objective (gd: one step on f = sum_i p_i f_i a round) reaches a
//   test accuracy >= 0.85. A linear classifier on the full MNIST set errs on about 12% of the
//   test digits (LeCun, Bottou, Bengio and Haffner, Proc. IEEE 86(11), 1998, Fig. 9: "linear
//   classifier", 12.0%, a value recalled from memory); on this 10,000-digit subset the issue asks for >= 0.85;
// - the perceptron (one tanh hidden layer of 32 units), trained the same way on the same split,
//   beats softmax and reaches >= 0.90 (the same figure's two-layer networks err on 4.7% or less, also recalled from memory);
// - FedAvg and FedLin over the 20 label-skewed clients reach >= 0.85 within 15 rounds, and every
//   client's own test part is scored (mean and worst client).
// Cheap enough for CI: minibatch gradients (16 rows per client per step) instead of full
// ones, and the walk without the oracle (test/support/held-out-walk.ts): the accuracy needs no
// x*, and the oracle's solve on the digits costs more than all these rounds together. Only the
// round 0 and the last round are evaluated.

import { readFileSync } from 'node:fs';
import { beforeAll, describe, expect, it } from 'vitest';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import type { HeldOutRecord } from '../../src/engine/round-record.js';
import { walkWithoutOracle } from '../support/held-out-walk.js';

const text = readFileSync(
  new URL('../../scenarios/digit-label-skew.yaml', import.meta.url),
  'utf8',
);
/** Generous bounds for a loaded 2-core machine; each walk takes seconds alone. */
const WALK_TIMEOUT_MS = 180_000;

function finalHeldOut(tweaks: string[]): HeldOutRecord {
  const scenario = scenarioFromText(text, 'digit-label-skew.yaml', [
    'data.testFraction:0.2',
    ...tweaks,
  ]);
  const { rounds } = walkWithoutOracle(scenario);
  const last = rounds[rounds.length - 1];
  expect(last.round).toBe(scenario.run.rounds);
  expect(last.heldOut).toBeDefined();
  return last.heldOut!;
}

/** Pooled training: gd, every client a minibatch of 16 (320 digits a step), 60 steps. */
const POOLED_SOFTMAX = [
  'method.name:gd',
  'method.stepSize:2',
  'method.gradient.minibatch:16',
  'run.rounds:60',
  'run.evalEvery:60',
];
/** The same, with a minibatch of 16 a client and 120 steps. */
const POOLED_PERCEPTRON = [
  'problem.kind:perceptron',
  'problem.hiddenWidths:[32]',
  'problem.activation:tanh',
  'method.name:gd',
  'method.stepSize:4',
  'method.gradient.minibatch:16',
  'run.rounds:120',
  'run.evalEvery:120',
];
/** 20 clients, 5 local minibatch steps of 16 digits each, 15 rounds. */
const FEDERATED = (method: string) => [
  `method.name:${method}`,
  'method.stepSize:1',
  'method.stepPolicy:fixed',
  'method.localSteps:5',
  'method.gradient.minibatch:16',
  'run.rounds:15',
  'run.evalEvery:15',
];

describe('held-out accuracy on the digits, pooled', () => {
  let softmax: HeldOutRecord;
  let perceptron: HeldOutRecord;
  beforeAll(() => {
    softmax = finalHeldOut(POOLED_SOFTMAX);
    perceptron = finalHeldOut(POOLED_PERCEPTRON);
  }, 2 * WALK_TIMEOUT_MS);

  it('softmax reaches a test accuracy of at least 0.85', () => {
    expect(softmax.accuracy).toBeGreaterThanOrEqual(0.85);
    // The pooled test loss is a mean cross-entropy below log(10), the loss of a uniform guess.
    expect(softmax.loss).toBeLessThan(Math.log(10));
  });

  it('the perceptron beats softmax on the same split and reaches at least 0.90', () => {
    expect(perceptron.accuracy).toBeGreaterThanOrEqual(0.9);
    expect(perceptron.accuracy!).toBeGreaterThan(softmax.accuracy!);
  });
});

describe('held-out accuracy on the digits, federated over 20 label-skewed clients', () => {
  for (const method of ['fedavg', 'fedlin']) {
    it(
      `${method} reaches a test accuracy of at least 0.85 within 15 rounds, scored per client`,
      () => {
        const heldOut = finalHeldOut(FEDERATED(method));
        expect(heldOut.accuracy).toBeGreaterThanOrEqual(0.85);
        const perClient = heldOut.clientAccuracy!;
        expect(perClient.worst).toBeLessThanOrEqual(perClient.mean);
        expect(perClient.range).toBeGreaterThanOrEqual(0);
        expect(perClient.worstClientId).toBeGreaterThanOrEqual(0);
        expect(perClient.worstClientId).toBeLessThan(20);
      },
      WALK_TIMEOUT_MS,
    );
  }
});
