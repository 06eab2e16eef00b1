// `--tweak field:value` on the commands that read a scenario, as a user runs them (the built
// binary): the value reaches the run, and a bad tweak exits with 2 and names itself.
import { afterAll, describe, expect, it } from 'vitest';
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parse } from 'yaml';
import { runCli } from './run-cli.js';

const root = mkdtempSync(join(tmpdir(), 'roundwire-tweak-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));

describe('--tweak reaches the command', () => {
  it('theory', async () => {
    const r = await runCli([
      'theory',
      'scenarios/quickstart.yaml',
      '--json',
      '--tweak',
      'clients.count:3',
      '--tweak',
      'data.features:4',
    ]);
    expect(r.code, r.stderr).toBe(0);
    const report = JSON.parse(r.stdout);
    expect(report.clientCount).toBe(3);
    expect(report.dimension).toBe(4);
  });

  it('run', async () => {
    const out = join(root, 'run');
    const r = await runCli([
      'run',
      'scenarios/quickstart.yaml',
      '--in-process',
      '--json',
      '--out',
      out,
      '--tweak',
      'method.name:fedavg',
      '--tweak',
      'run.rounds:7',
      '--tweak',
      'run.target:0',
    ]);
    expect(r.code, r.stderr).toBe(0);
    const summary = JSON.parse(r.stdout);
    expect(summary.method).toBe('fedavg');
    expect(summary.rounds).toBe(7);
    const resolved = parse(readFileSync(join(out, 'resolved-scenario.yaml'), 'utf8'));
    expect(resolved.method.name).toBe('fedavg');
    expect(resolved.run).toMatchObject({ rounds: 7, target: 0 });
  });

  it('compare: every variant carries the tweak, and a ladder wins over a tweak of the same field', async () => {
    const out = join(root, 'compare');
    const r = await runCli([
      'compare',
      'scenarios/quickstart.yaml',
      '--ladder',
      'method.localSteps:1/2',
      '--tweak',
      'run.rounds:4',
      '--tweak',
      'method.localSteps:9',
      '--out',
      out,
      '--json',
    ]);
    expect(r.code, r.stderr).toBe(0);
    const c = JSON.parse(r.stdout);
    expect(c.variants.map((v: { rounds: number }) => v.rounds)).toEqual([4, 4]);
    const steps = c.variants.map(
      (v: { folder: string }) =>
        parse(readFileSync(join(out, v.folder, 'resolved-scenario.yaml'), 'utf8')).method
          .localSteps,
    );
    expect(steps).toEqual([1, 2]);
  });
});

describe('a bad --tweak exits with 2 and names the tweak', () => {
  const cases: [string[], string][] = [
    [
      ['theory', 'scenarios/quickstart.yaml', '--tweak', 'seed=3'],
      'roundwire: --tweak "seed=3": no colon; expected field:value, e.g. method.localSteps:10',
    ],
    [
      ['run', 'scenarios/quickstart.yaml', '--in-process', '--tweak', 'method.localSteps:-3'],
      'roundwire: method.localSteps: expected a positive integer, a list of positive integers or {uniform: [min, max]}, got -3 (from --tweak "method.localSteps:-3")',
    ],
    [
      ['run', 'scenarios/quickstart.yaml', '--in-process', '--tweak', 'method.nmae:fedavg'],
      'roundwire: method.nmae: unknown key (did you mean "name"?); expected one of name, localSteps, stepSize, stepPolicy, serverStepSize, gradient, participation, proxCoefficient, proxTolerance (from --tweak "method.nmae:fedavg")',
    ],
    [
      ['compare', 'scenarios/quickstart.yaml', '--ladder', 'seed:1/2', '--tweak', 'run.rounds:[4'],
      'roundwire: run.rounds: --tweak "run.rounds:[4": cannot read the value: ',
    ],
    [
      ['compare', 'scenarios/quickstart.yaml', '--ladder', 'seed:1/2', '--tweak', 'name.first:x'],
      'roundwire: name: not a mapping, so it has no field "first" to tweak',
    ],
  ];
  for (const [args, message] of cases) {
    it(`${args[0]} ${args.slice(-1)[0]}`, async () => {
      const out = join(root, `bad-${args[0]}`);
      const r = await runCli(args[0] === 'theory' ? args : [...args, '--out', out]);
      expect(r.code).toBe(2);
      expect(r.stdout).toBe('');
      expect(r.stderr.trim().split('\n')).toHaveLength(1);
      expect(r.stderr.startsWith(message), r.stderr).toBe(true);
      expect(existsSync(out)).toBe(false);
    });
  }

  it('the old spelling is no longer an option', async () => {
    const r = await runCli(['theory', 'scenarios/quickstart.yaml', '--set', 'seed=3']);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/unknown option '--set'/);
  });
});
