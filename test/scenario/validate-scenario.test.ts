// Bad scenario documents: each kind gives one message that names the field's path and says what
// was expected. (The message wording is ours; the checks are that the path and the given value
// appear, and that nothing is silently defaulted.)
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { ScenarioError } from '../../src/scenario/scenario-error.js';

const quickstart = readFileSync(new URL('../../scenarios/quickstart.yaml', import.meta.url), 'utf8');

function failure(text: string, overrides: string[] = [], name = 'bad.yaml'): ScenarioError {
  try {
    scenarioFromText(text, name, overrides);
  } catch (error) {
    expect(error).toBeInstanceOf(ScenarioError);
    return error as ScenarioError;
  }
  throw new Error('expected the scenario to be rejected');
}

describe('scenario validation', () => {
  it('accepts the quickstart and fills every default explicitly', () => {
    const s = scenarioFromText(quickstart, 'quickstart.yaml');
    expect(s.method.name).toBe('fedlin');
    expect(s.timing.policy).toEqual({ kind: 'all' });
    expect(s.compression.uplink.default.kind).toBe('none');
    expect(s.clients.weights).toBe('samples');
  });

  it('wrong type: names the field, the expectation and the given value', () => {
    const e = failure(quickstart, ['clients.count=abc']);
    expect(e.code).toBe('E_SCENARIO_FIELD');
    expect(e.fieldPath).toBe('clients.count');
    expect(e.message).toMatch(/^clients\.count: expected a positive integer.*got "abc"$/);
  });

  it('negative count: the localSteps message lists every accepted form', () => {
    const e = failure(quickstart, ['method.localSteps=-3']);
    expect(e.message).toBe('method.localSteps: expected a positive integer, a list of positive integers or {uniform: [min, max]}, got -3');
  });

  it('unknown key: names it and suggests the closest known key', () => {
    const e = failure(quickstart, ['method.localStep=3']);
    expect(e.fieldPath).toBe('method.localStep');
    expect(e.message).toContain('did you mean "localSteps"?');
  });

  it('missing field: says it is missing and what it should be', () => {
    const e = failure(quickstart.replace(/^  rounds: \d+\n/m, ''));
    expect(e.fieldPath).toBe('run.rounds');
    expect(e.message).toMatch(/missing; expected a positive integer/);
  });

  it('missing field inside a union branch', () => {
    const e = failure(quickstart, ['data.partition={kind: dirichlet}']);
    expect(e.message).toBe('data.partition.alpha: missing; expected a positive number');
  });

  it('broken YAML: reports the line', () => {
    const e = failure(`${quickstart}\n  : bad: [`);
    expect(e.code).toBe('E_SCENARIO_SYNTAX');
    expect(e.message).toMatch(/not valid YAML at line \d+, column \d+/);
  });

  it('broken JSON in a .json file', () => {
    const e = failure('{"name": "x",', [], 'bad.json');
    expect(e.code).toBe('E_SCENARIO_SYNTAX');
    expect(e.message).toMatch(/^bad\.json: not valid JSON/);
  });

  it('a document that is not a mapping', () => {
    expect(failure('- 1\n- 2\n').message).toMatch(/expected a mapping of settings/);
  });

  it('cross-field rules: an inverted range and a compressor without k', () => {
    expect(failure(quickstart, ['data.samplesPerClient={uniform: [5, 2]}']).message).toMatch(/^data\.samplesPerClient: uniform: min must not exceed max/);
    expect(failure(quickstart, ['compression.uplink.default={kind: top-k}']).message).toMatch(/top-k and rand-k need a fraction or a count/);
  });

  it('enum: lists the choices', () => {
    expect(failure(quickstart, ['method.name=fedavgg']).message).toMatch(/^method\.name: expected one of "gd", "fedavg".*got "fedavgg"$/);
  });

  it('duplicate keys in YAML are rejected rather than silently overwritten', () => {
    expect(failure(`${quickstart}\nseed: 8\n`).code).toBe('E_SCENARIO_SYNTAX');
  });
});

describe('--set overrides', () => {
  it('applies typed values and creates intermediate mappings', () => {
    const s = scenarioFromText(quickstart, 'q.yaml', ['method.localSteps={uniform: [1, 20]}', 'timing.slowdown={kind: two-class, fraction: 0.25, factor: 10}', 'run.target=1e-8']);
    expect(s.method.localSteps).toEqual({ uniform: [1, 20] });
    expect(s.timing.slowdown).toEqual({ kind: 'two-class', fraction: 0.25, factor: 10 });
    expect(s.run.target).toBe(1e-8);
  });

  it('rejects a malformed override with its own message', () => {
    expect(failure(quickstart, ['method.localSteps']).code).toBe('E_SCENARIO_OVERRIDE');
    expect(failure(quickstart, ['name.sub=1']).message).toMatch(/^name: --set: this field is not a mapping/);
  });
});
