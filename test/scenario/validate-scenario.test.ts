// Bad scenario documents: each kind gives one message that names the field's path and says what
// was expected. (The message wording is ours; the checks are that the path and the given value
// appear, and that nothing is silently defaulted.)
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { ScenarioError } from '../../src/scenario/scenario-error.js';

const quickstart = readFileSync(
  new URL('../../scenarios/quickstart.yaml', import.meta.url),
  'utf8',
);

function failure(text: string, tweaks: string[] = [], name = 'bad.yaml'): ScenarioError {
  try {
    scenarioFromText(text, name, tweaks);
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
    const e = failure(quickstart, ['clients.count:abc']);
    expect(e.code).toBe('E_SCENARIO_FIELD');
    expect(e.fieldPath).toBe('clients.count');
    expect(e.message).toMatch(
      /^clients\.count: expected a positive integer.*got "abc" \(from --tweak "clients\.count:abc"\)$/,
    );
  });

  it('negative count: the localSteps message lists every accepted form', () => {
    const e = failure(quickstart, ['method.localSteps:-3']);
    expect(e.message).toBe(
      'method.localSteps: expected a positive integer, a list of positive integers or {uniform: [min, max]}, got -3 (from --tweak "method.localSteps:-3")',
    );
  });

  it('unknown key: names it and suggests the closest known key', () => {
    const e = failure(quickstart, ['method.localStep:3']);
    expect(e.fieldPath).toBe('method.localStep');
    expect(e.message).toContain('did you mean "localSteps"?');
  });

  it('missing field: says it is missing and what it should be', () => {
    const e = failure(quickstart.replace(/^  rounds: \d+\n/m, ''));
    expect(e.fieldPath).toBe('run.rounds');
    expect(e.message).toMatch(/missing; expected a positive integer/);
  });

  it('missing field inside a union branch', () => {
    const e = failure(quickstart, ['data.partition:{kind: dirichlet}']);
    expect(e.message).toBe(
      'data.partition.alpha: missing; expected a positive number (from --tweak "data.partition:{kind: dirichlet}")',
    );
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
    expect(failure(quickstart, ['data.samplesPerClient:{uniform: [5, 2]}']).message).toMatch(
      /^data\.samplesPerClient: uniform: min must not exceed max/,
    );
    expect(failure(quickstart, ['compression.uplink.default:{kind: top-k}']).message).toMatch(
      /top-k and rand-k need a fraction or a count/,
    );
  });

  it('enum: lists the choices', () => {
    expect(failure(quickstart, ['method.name:fedavgg']).message).toMatch(
      /^method\.name: expected one of "gd", "fedavg".*got "fedavgg" \(from --tweak "method\.name:fedavgg"\)$/,
    );
  });

  it('duplicate keys in YAML are rejected rather than silently overwritten', () => {
    expect(failure(`${quickstart}\nseed: 8\n`).code).toBe('E_SCENARIO_SYNTAX');
  });
});

describe('--tweak', () => {
  it('applies typed values and creates intermediate mappings', () => {
    const s = scenarioFromText(quickstart, 'q.yaml', [
      'method.localSteps:{uniform: [1, 20]}',
      'timing.slowdown: {kind: two-class, fraction: 0.25, factor: 10}',
      'run.target:1e-8',
    ]);
    expect(s.method.localSteps).toEqual({ uniform: [1, 20] });
    expect(s.timing.slowdown).toEqual({ kind: 'two-class', fraction: 0.25, factor: 10 });
    expect(s.run.target).toBe(1e-8);
  });

  it('splits at the first colon only, so values may hold colons', () => {
    expect(scenarioFromText(quickstart, 'q.yaml', ['description:ratio 1:2']).description).toBe(
      'ratio 1:2',
    );
    expect(scenarioFromText(quickstart, 'q.yaml', ['description:"a: b"']).description).toBe('a: b');
  });

  it('applies tweaks in order, the later winning', () => {
    expect(scenarioFromText(quickstart, 'q.yaml', ['seed:1', 'seed:2']).seed).toBe(2);
  });

  it('rejects a malformed tweak with a message naming it', () => {
    const noColon = failure(quickstart, ['method.localSteps']);
    expect(noColon.code).toBe('E_SCENARIO_TWEAK');
    expect(noColon.message).toBe(
      '--tweak "method.localSteps": no colon; expected field:value, e.g. method.localSteps:10',
    );
    expect(failure(quickstart, ['method.localSteps:']).message).toBe(
      'method.localSteps: --tweak "method.localSteps:": no value after the colon',
    );
    expect(failure(quickstart, [':3']).message).toBe('--tweak ":3": no field before the colon');
    expect(failure(quickstart, ['method..name:x']).code).toBe('E_SCENARIO_TWEAK');
    expect(failure(quickstart, ['seed:[1']).message).toMatch(
      /^seed: --tweak "seed:\[1": cannot read the value/,
    );
    const notMapping = failure(quickstart, ['name.sub:1']);
    expect(notMapping.code).toBe('E_SCENARIO_TWEAK');
    expect(notMapping.message).toBe('name: not a mapping, so it has no field "sub" to tweak');
  });

  it('names the tweak that set a rejected value, and only that one', () => {
    const e = failure(quickstart, ['seed:3', 'method.localSteps:{uniform: [1, 0]}']);
    expect(e.fieldPath).toBe('method.localSteps.uniform[1]');
    expect(e.message).toMatch(/\(from --tweak "method\.localSteps:\{uniform: \[1, 0\]\}"\)$/);
    expect(failure(quickstart.replace(/^  rounds: \d+\n/m, ''), ['seed:3']).message).not.toContain(
      '--tweak',
    );
  });
});

describe('ladders', () => {
  const withLadders = (ladders: string) => `${quickstart}\nladders:\n${ladders}`;

  it('accepts single and zipped ladders; values are left for compare to check', () => {
    const s = scenarioFromText(
      withLadders(
        '  - {field: method.name, rungs: [fedavg, fedlin]}\n  - {fields: [method.localSteps, method.stepSize], rungs: [[1, 0.1], [5, auto]]}\n',
      ),
      'l.yaml',
    );
    expect(s.ladders).toEqual([
      { field: 'method.name', rungs: ['fedavg', 'fedlin'] },
      {
        fields: ['method.localSteps', 'method.stepSize'],
        rungs: [
          [1, 0.1],
          [5, 'auto'],
        ],
      },
    ]);
  });

  it('a zipped rung must hold one value per field', () => {
    const e = failure(
      withLadders(
        '  - {fields: [method.name, method.stepSize], rungs: [[fedavg, 0.05], [fedlin]]}\n',
      ),
    );
    expect(e.fieldPath).toBe('ladders[0].rungs[1]');
    expect(e.message).toBe(
      'ladders[0].rungs[1]: expected a list of 2 values, one for each of method.name, method.stepSize; got a list of 1',
    );
    expect(
      failure(withLadders('  - {fields: [method.name, method.stepSize], rungs: [fedavg]}\n'))
        .message,
    ).toMatch(/got a single value$/);
  });

  it('field or fields, not both; a field path; no field twice in one ladder; at least one rung', () => {
    expect(
      failure(withLadders('  - {field: seed, fields: [seed, name], rungs: [[1, a]]}\n')).message,
    ).toMatch(/^ladders\[0\]: expected either field .* or fields/);
    expect(failure(withLadders('  - {rungs: [1]}\n')).message).toMatch(
      /^ladders\[0\]: expected either field/,
    );
    expect(failure(withLadders('  - {field: "method name", rungs: [1]}\n')).message).toBe(
      'ladders[0].field: expected a dotted field path such as method.name',
    );
    expect(failure(withLadders('  - {fields: [seed, seed], rungs: [[1, 2]]}\n')).message).toBe(
      'ladders[0].fields: seed is listed twice',
    );
    expect(failure(withLadders('  - {field: seed, rungs: []}\n')).fieldPath).toBe(
      'ladders[0].rungs',
    );
  });
});
