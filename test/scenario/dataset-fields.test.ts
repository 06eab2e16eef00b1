// A data set scenario's fields are checked against the data set before anything is loaded: a
// wrong name, target, problem kind, class count or natural key is refused naming the field, and
// the built command line exits 2 with it.
import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { validateScenario } from '../../src/scenario/validate-scenario.js';
import { runCli } from '../cli/run-cli.js';

function scenarioWithData(
  problem: Record<string, unknown>,
  data: Record<string, unknown>,
  clientCount = 3,
): Record<string, unknown> {
  return {
    name: 'dataset-fields',
    seed: 1,
    problem,
    data: { source: 'dataset', ...data },
    clients: { count: clientCount },
    method: { name: 'gd' },
    run: { rounds: 2 },
  };
}

const refused: [string, Record<string, unknown>, Record<string, unknown>, string][] = [
  ['an unknown data set', { kind: 'softmax' }, { name: 'mnist' }, 'data.name'],
  [
    'a target of another data set',
    { kind: 'least-squares' },
    { name: 'cars', target: 'delay-minutes' },
    'data.target',
  ],
  [
    'an unknown target',
    { kind: 'least-squares' },
    { name: 'cars', target: 'price' },
    'data.target',
  ],
  [
    'a problem kind the target cannot use',
    { kind: 'least-squares' },
    { name: 'flights', target: 'delayed-over-15-minutes' },
    'problem.kind',
  ],
  [
    'softmax with the wrong class count',
    { kind: 'softmax', classes: 3 },
    { name: 'digits' },
    'problem.classes',
  ],
  [
    'a natural key the data set does not have',
    { kind: 'softmax' },
    { name: 'penguins', partition: { kind: 'natural', key: 'origin' } },
    'data.partition.key',
  ],
  [
    'a label partition of a real-valued target',
    { kind: 'least-squares' },
    { name: 'gapminder', partition: { kind: 'dirichlet', alpha: 1 } },
    'data.partition.kind',
  ],
];

describe('data set fields', () => {
  for (const [what, problem, data, field] of refused) {
    it(`refuses ${what}, naming ${field}`, () => {
      expect(() => validateScenario(scenarioWithData(problem, data))).toThrow(
        expect.objectContaining({ code: 'E_SCENARIO_FIELD', fieldPath: field }),
      );
    });
  }

  it('accepts each data set with its default target and the matching problem', () => {
    const fits: [Record<string, unknown>, Record<string, unknown>][] = [
      [{ kind: 'softmax', classes: 10 }, { name: 'digits' }],
      [{ kind: 'least-squares' }, { name: 'flights' }],
      [{ kind: 'logistic' }, { name: 'flights', target: 'delayed-over-15-minutes' }],
      [{ kind: 'least-squares' }, { name: 'gapminder' }],
      [{ kind: 'softmax', classes: 3 }, { name: 'penguins' }],
      [{ kind: 'least-squares' }, { name: 'cars' }],
    ];
    for (const [problem, data] of fits)
      expect(validateScenario(scenarioWithData(problem, data)).data).toMatchObject(data);
  });
});

describe('roundwire run with a bad data set field', () => {
  const root = mkdtempSync(join(tmpdir(), 'roundwire-dataset-fields-'));
  afterAll(() => rmSync(root, { recursive: true, force: true }));

  const cases: [string, Record<string, unknown>, RegExp][] = [
    ['bad-name', scenarioWithData({ kind: 'softmax' }, { name: 'mnist' }), /data\.name/],
    [
      'bad-target',
      scenarioWithData({ kind: 'least-squares' }, { name: 'cars', target: 'price' }),
      /data\.target/,
    ],
    [
      'bad-kind',
      scenarioWithData({ kind: 'logistic' }, { name: 'gapminder' }),
      /problem\.kind: .*needs problem\.kind "least-squares"/,
    ],
    [
      'bad-count',
      scenarioWithData(
        { kind: 'softmax', classes: 3 },
        { name: 'penguins', partition: { kind: 'natural', key: 'island' } },
        5,
      ),
      /clients\.count must be 3, got 5/,
    ],
  ];
  for (const [file, scenario, pattern] of cases) {
    it(`${file}: exits 2 naming the field`, async () => {
      const path = join(root, `${file}.json`);
      writeFileSync(path, JSON.stringify(scenario));
      const r = await runCli(['run', '--in-process', '--out', join(root, `${file}-out`), path]);
      expect(r.code, r.stderr).toBe(2);
      expect(r.stderr).toMatch(pattern);
    });
  }
});
