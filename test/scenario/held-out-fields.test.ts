// The held-out fields: data.testFraction is a share in [0, 1) defaulting to 0 (nothing held out,
// so that older scenarios run as before); run.targetAccuracy is refused where it could never be
// measured (least squares, or nothing held out), naming the field.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { ScenarioError } from '../../src/scenario/scenario-error.js';

const quickstart = readFileSync(
  new URL('../../scenarios/quickstart.yaml', import.meta.url),
  'utf8',
);
const digits = readFileSync(
  new URL('../../scenarios/digit-label-skew.yaml', import.meta.url),
  'utf8',
);

function failure(text: string, tweaks: string[]): ScenarioError {
  try {
    scenarioFromText(text, 'bad.yaml', tweaks);
  } catch (error) {
    expect(error).toBeInstanceOf(ScenarioError);
    return error as ScenarioError;
  }
  throw new Error('expected the scenario to be rejected');
}

describe('held-out scenario fields', () => {
  it('holds nothing out by default, and the bundled digits a fifth with a target accuracy', () => {
    expect(scenarioFromText(quickstart, 'quickstart.yaml').data.testFraction).toBe(0);
    const s = scenarioFromText(digits, 'digit-label-skew.yaml');
    expect(s.data.testFraction).toBe(0.2);
    expect(s.run.targetAccuracy).toBe(0.85);
  });

  it('refuses a test fraction outside [0, 1)', () => {
    for (const value of ['1', '-0.1', 'many']) {
      const e = failure(quickstart, [`data.testFraction:${value}`]);
      expect(e.code).toBe('E_SCENARIO_FIELD');
      expect(e.fieldPath).toBe('data.testFraction');
    }
  });

  it('refuses a target accuracy for least squares or without a test part, or outside (0, 1]', () => {
    const leastSquares = failure(quickstart, ['run.targetAccuracy:0.9', 'data.testFraction:0.2']);
    expect(leastSquares.fieldPath).toBe('run.targetAccuracy');
    expect(leastSquares.message).toMatch(/least squares has no accuracy/);
    const nothingHeld = failure(digits, ['data.testFraction:0']);
    expect(nothingHeld.fieldPath).toBe('run.targetAccuracy');
    expect(nothingHeld.message).toMatch(/set data\.testFraction above 0/);
    expect(failure(digits, ['run.targetAccuracy:1.5']).fieldPath).toBe('run.targetAccuracy');
    expect(failure(digits, ['run.targetAccuracy:0']).fieldPath).toBe('run.targetAccuracy');
  });
});
