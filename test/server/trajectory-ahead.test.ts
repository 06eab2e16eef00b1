// The predicted trajectory walked ahead (server/trajectory-ahead.ts) answers every round with the
// value the walk in order gives (PredictedTrajectory.at, bit for bit), walks ahead no further
// than the next round the walk evaluates (run.evalEvery) nor past the run, and answers a later
// first round (a resumed run's) the same.

import { describe, expect, it } from 'vitest';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';
import { planFor } from '../../src/engine/in-process-engine.js';
import { PredictedTrajectory } from '../../src/engine/predicted-trajectory.js';
import { TrajectoryAhead } from '../../server/trajectory-ahead.js';

const ROUNDS = 12;

function freshTrajectory(): () => PredictedTrajectory {
  const scenario = loadScenarioFile('scenarios/quickstart.yaml', [`run.rounds:${ROUNDS}`]);
  const { plan, theory } = planFor(scenario);
  return () =>
    new PredictedTrajectory(
      plan,
      theory.instance.objectives,
      theory.instance.global,
      theory.optimum,
    );
}

/** Walks ahead as the oracle thread does between tasks; returns the rounds walked. */
function walkAhead(ahead: TrajectoryAhead): number {
  let walked = 0;
  while (ahead.hasWorkAhead()) {
    ahead.walkOne();
    walked++;
  }
  return walked;
}

describe('trajectory walked ahead', () => {
  const fresh = freshTrajectory();
  const inOrder = fresh();
  const expected = Array.from({ length: ROUNDS + 1 }, (_, r) => inOrder.at(r));

  it('gives the in-order values bit for bit, walked ahead or not', () => {
    const ahead = new TrajectoryAhead(fresh(), { rounds: ROUNDS, evalEvery: 1 });
    for (let round = 0; round <= ROUNDS; round++) {
      expect(Object.is(ahead.at(round), expected[round]), `round ${round}`).toBe(true);
      walkAhead(ahead);
    }
    expect(expected.every((v) => v !== null && Number.isFinite(v))).toBe(true);
  });

  it('walks ahead to the next evaluated round only, and never past the run', () => {
    const everyRound = new TrajectoryAhead(fresh(), { rounds: ROUNDS, evalEvery: 1 });
    everyRound.at(3);
    expect(walkAhead(everyRound)).toBe(1);
    expect(walkAhead(everyRound)).toBe(0);
    const everyFifth = new TrajectoryAhead(fresh(), { rounds: ROUNDS, evalEvery: 5 });
    everyFifth.at(5);
    expect(everyFifth.nextAsked()).toBe(10);
    expect(walkAhead(everyFifth)).toBe(5);
    everyFifth.at(10);
    expect(everyFifth.nextAsked()).toBe(ROUNDS);
    expect(walkAhead(everyFifth)).toBe(2);
    everyFifth.at(ROUNDS);
    expect(walkAhead(everyFifth)).toBe(0);
  });

  it('answers a first round past 0 (a resumed run) and earlier rounds again', () => {
    const ahead = new TrajectoryAhead(fresh(), { rounds: ROUNDS, evalEvery: 1 });
    expect(Object.is(ahead.at(7), expected[7])).toBe(true);
    expect(Object.is(ahead.at(2), expected[2])).toBe(true);
    expect(Object.is(ahead.at(8), expected[8])).toBe(true);
  });
});
