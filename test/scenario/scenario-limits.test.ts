// The schema's limits (SCENARIO_LIMITS in src/scenario/schema.ts): each field is accepted at its
// limit and refused one past it, with one message naming the field, the value and the limit.
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { ScenarioError } from '../../src/scenario/scenario-error.js';
import { SCENARIO_LIMITS } from '../../src/scenario/schema.js';

const quickstart = readFileSync(
  new URL('../../scenarios/quickstart.yaml', import.meta.url),
  'utf8',
);

function refusal(tweaks: string[]): ScenarioError {
  try {
    scenarioFromText(quickstart, 'quickstart.yaml', tweaks);
  } catch (error) {
    expect(error).toBeInstanceOf(ScenarioError);
    return error as ScenarioError;
  }
  throw new Error(`expected ${tweaks.join(' ')} to be refused`);
}

const accepts = (tweaks: string[]) =>
  expect(() => scenarioFromText(quickstart, 'quickstart.yaml', tweaks)).not.toThrow();

describe('scenario limits', () => {
  it('features: accepted at the limit, refused past it', () => {
    accepts([`data.features:${SCENARIO_LIMITS.featuresMax}`]);
    const e = refusal([`data.features:${SCENARIO_LIMITS.featuresMax + 1}`]);
    expect(e.code).toBe('E_SCENARIO_FIELD');
    expect(e.fieldPath).toBe('data.features');
    expect(e.message).toMatch(/^data\.features: expected a positive integer <= 100000, got 100001/);
  });

  it('clients: accepted at the limit, refused past it', () => {
    accepts([`clients.count:${SCENARIO_LIMITS.clientsMax}`]);
    const e = refusal([`clients.count:${SCENARIO_LIMITS.clientsMax + 1}`]);
    expect(e.fieldPath).toBe('clients.count');
    expect(e.message).toMatch(/<= 10000, got 10001/);
  });

  it('local steps: one count, a list and a range are held to the limit alike', () => {
    const max = SCENARIO_LIMITS.localStepsMax;
    accepts([`method.localSteps:${max}`]);
    for (const value of [
      `${max + 1}`,
      `[1, 2, 3, 4, 5, 6, 7, ${max + 1}]`,
      `{uniform: [1, ${max + 1}]}`,
    ]) {
      const e = refusal([`method.localSteps:${value}`]);
      expect(e.code).toBe('E_SCENARIO_FIELD');
      expect(e.fieldPath).toBe('method.localSteps');
      expect(e.message).toMatch(
        new RegExp(
          `^method\\.localSteps: ${max + 1} local steps is above the limit of ${max} \\(from --tweak`,
        ),
      );
    }
    // The deadline policy's own cap is the same limit.
    const e = refusal([`timing.policy:{kind: deadline, budgetSeconds: 1, stepsMax: ${max + 1}}`]);
    expect(e.fieldPath).toBe('timing.policy.stepsMax');
  });

  it('samples per client: refused past the limit', () => {
    const max = SCENARIO_LIMITS.samplesPerClientMax;
    accepts([`data.samplesPerClient:${max}`]);
    const e = refusal([`data.samplesPerClient:{uniform: [10, ${max + 1}]}`]);
    expect(e.fieldPath).toBe('data.samplesPerClient');
    expect(e.message).toMatch(
      new RegExp(`^data\\.samplesPerClient: ${max + 1} samples is above the limit of ${max}`),
    );
  });

  it('a bad count keeps its message: the limit is checked on valid counts only', () => {
    const e = refusal(['method.localSteps:-3']);
    expect(e.message).toMatch(
      /^method\.localSteps: expected a positive integer, a list of positive integers/,
    );
  });

  it("softmax: the model's dimension, classes x features, is held to the dimension limit", () => {
    accepts(['problem.kind:softmax', 'problem.classes:100', 'data.features:1000']);
    const e = refusal(['problem.kind:softmax', 'problem.classes:1000', 'data.features:1000']);
    expect(e.code).toBe('E_SCENARIO_FIELD');
    expect(e.fieldPath).toBe('problem.classes');
    expect(e.message).toBe(
      'problem.classes: 1000 classes x 1000 features is a model of dimension 1000000, above the limit of 100000 (from --tweak "problem.classes:1000")',
    );
    // Least squares reads no classes: its dimension is the features alone.
    accepts(['problem.classes:1000', 'data.features:1000']);
  });
});
