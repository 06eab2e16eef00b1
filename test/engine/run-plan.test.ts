// fastest-k's k is checked against a round's participants once, when the plan is made, so that
// the in-process engine and the coordinator refuse the same scenarios alike (E_TIMING_POLICY_K, naming
// timing.policy.k). Participants per round follow the round schedule's own rule,
// max(1, round(participation * clients)) (src/timing/participation.ts).

import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { assertPlannable } from '../../src/engine/run-plan.js';
import { participantCount } from '../../src/timing/participation.js';
import { TimingError } from '../../src/timing/errors.js';

const text = readFileSync(new URL('../../scenarios/quickstart.yaml', import.meta.url), 'utf8');
const scenario = (tweaks: string[]) => scenarioFromText(text, 'quickstart.yaml', tweaks);

function refusal(tweaks: string[]): TimingError | null {
  try {
    assertPlannable(scenario(tweaks));
  } catch (error) {
    if (error instanceof TimingError) return error;
    throw error;
  }
  return null;
}

describe('assertPlannable: fastest-k against the participants of a round', () => {
  it('accepts k up to the participants and refuses one more, for full and partial participation', () => {
    // quickstart has 8 clients; participation 0.3 gives round(2.4) = 2 per round.
    for (const participation of [1, 0.5, 0.3]) {
      const perRound = participantCount(participation, 8);
      expect(
        refusal([
          `method.participation:${participation}`,
          `timing.policy:{kind: fastest-k, k: ${perRound}}`,
        ]),
      ).toBeNull();
      const refused = refusal([
        `method.participation:${participation}`,
        `timing.policy:{kind: fastest-k, k: ${perRound + 1}}`,
      ]);
      expect(refused).toMatchObject({ code: 'E_TIMING_POLICY_K', fieldPath: 'timing.policy.k' });
      expect(refused!.message).toBe(
        `timing.policy.k: fastest-k counts the first k updates of a round, but a round has ${perRound} participants (method.participation ${participation} of clients.count 8); give k <= ${perRound}, got ${perRound + 1}`,
      );
    }
  });

  it('has nothing to refuse under the other policies', () => {
    expect(refusal(['method.participation:0.1', 'timing.policy:{kind: all}'])).toBeNull();
    expect(
      refusal(['method.participation:0.1', 'timing.policy:{kind: deadline, budgetSeconds: 0.01}']),
    ).toBeNull();
  });
});
