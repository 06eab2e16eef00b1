import { describe, expect, it } from 'vitest';
import type { Method, MethodName } from '../../src/algorithm/method.js';
import type { Fields } from '../../src/vec/fields.js';
import { methodByName } from '../../src/algorithm/registry.js';
import { standardProblem } from './fixtures/least-squares-problem.js';
import {
  bitwiseEqual,
  budgetOf,
  modelOf,
  runRound,
  runRounds,
  startRun,
  type Run,
} from './fixtures/round-loop.js';

const NAMES: MethodName[] = [
  'gd',
  'fedavg',
  'fedprox',
  'fednova',
  'scaffold',
  'fedlin',
  'fedsplit',
];

describe('methodByName', () => {
  const problem = standardProblem();
  const m = problem.objectives.length;
  const eta = 1 / problem.smoothness;
  const plan = { localSteps: [1, 3, 6, 10], stepSizes: Array(m).fill(eta) };
  const config = { proxCoefficient: 0.1, proxTolerance: 1e-9 };

  it('returns each method under its own name, with FedLin the only two-exchange method (DESIGN.md, Methods)', () => {
    for (const name of NAMES) {
      const method = methodByName(name);
      expect(method.name).toBe(name);
      expect(method.exchanges).toEqual(name === 'fedlin' ? ['gradient', 'local'] : ['local']);
    }
  });

  it('rejects an unknown name with a stable code', () => {
    expect(() => methodByName('fedsgd' as MethodName)).toThrow(
      expect.objectContaining({ code: 'E_METHOD_UNKNOWN' }),
    );
  });

  for (const name of NAMES) {
    describe(name, () => {
      it('work() leaves the down fields untouched and returns fresh upload vectors', () => {
        const run = startRun(methodByName(name), problem, config);
        runRounds(run, plan, 2);
        for (const exchange of run.method.exchanges) {
          const down = run.method.broadcast(run.server, exchange);
          const before = copyFields(down);
          const work = () => {
            // FedLin's local exchange consumes the anchor of a gradient exchange each time.
            if (exchange === 'local' && run.method.exchanges.includes('gradient')) {
              const gradientDown = run.method.broadcast(run.server, 'gradient');
              run.method.work(
                run.clients[1],
                problem.objectives[1],
                gradientDown,
                budgetOf(plan, 1),
                'gradient',
              );
            }
            return run.method.work(
              run.clients[1],
              problem.objectives[1],
              down,
              budgetOf(plan, 1),
              exchange,
            );
          };
          const first = work();
          const firstCopy = copyFields(first);
          const second = work();
          expect(sameFields(down, before)).toBe(true);
          expect(sameFields(first, firstCopy)).toBe(true);
          for (const key of Object.keys(first)) expect(first[key]).not.toBe(second[key]);
        }
      });

      it('broadcasts vectors that aggregate does not change afterwards', () => {
        const run = startRun(methodByName(name), problem, config);
        runRound(run, plan);
        const held = run.method.exchanges.map((exchange) =>
          run.method.broadcast(run.server, exchange),
        );
        const copies = held.map(copyFields);
        runRounds(run, plan, 2);
        held.forEach((fields, k) => expect(sameFields(fields, copies[k])).toBe(true));
      });

      it('keeps plain-data states: a run continued from structuredClone copies repeats bit for bit', () => {
        const run = startRun(methodByName(name), problem, config);
        runRounds(run, plan, 3);
        const clone: Run = {
          method: run.method as Method,
          problem,
          server: structuredClone(run.server),
          clients: run.clients.map((c) => structuredClone(c)),
        };
        runRounds(run, plan, 3);
        runRounds(clone, plan, 3);
        expect(bitwiseEqual(modelOf(run), modelOf(clone))).toBe(true);
        expect(modelOf(run).every(Number.isFinite)).toBe(true);
      });
    });
  }
});

function copyFields(fields: Fields): Fields {
  return Object.fromEntries(Object.entries(fields).map(([k, v]) => [k, Float64Array.from(v)]));
}

function sameFields(a: Fields, b: Fields): boolean {
  const keys = Object.keys(a);
  return (
    keys.length === Object.keys(b).length &&
    keys.every((k) => b[k] !== undefined && bitwiseEqual(a[k], b[k]))
  );
}
