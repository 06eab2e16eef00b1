// Variants are the cartesian product of the axes (first axis slowest), each a list of --set
// overrides; the counts are products of the value counts, worked by hand.
import { describe, expect, it } from 'vitest';
import { COMPARE_LIMITS, expandVariants, parseVary, sweepAxes } from '../../src/report/compare-variants.js';
import { ReportError } from '../../src/report/report-error.js';
import { ScenarioError } from '../../src/scenario/scenario-error.js';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';

describe('parseVary', () => {
  it('splits values at top-level commas, keeping flow collections whole', () => {
    expect(parseVary('method.name=fedavg,scaffold,fedlin')).toEqual({ path: 'method.name', values: ['fedavg', 'scaffold', 'fedlin'] });
    expect(parseVary('method.localSteps=[1, 2],{uniform: [1, 5]},3').values).toEqual(['[1, 2]', '{uniform: [1, 5]}', '3']);
    expect(parseVary('name="a,b",c').values).toEqual(['"a,b"', 'c']);
  });

  it('names the field when no values are given', () => {
    const error = (() => { try { parseVary('method.name='); } catch (e) { return e; } })();
    expect(error).toBeInstanceOf(ScenarioError);
    expect((error as ScenarioError).fieldPath).toBe('method.name');
    expect(() => parseVary('method.name=a,,b')).toThrow(/method\.name/);
  });

  it('rejects text without a path', () => {
    expect(() => parseVary('fedavg')).toThrow(ReportError);
    expect(() => parseVary('bad key=1')).toThrow(ScenarioError);
  });
});

describe('expandVariants', () => {
  it('runs the product, first axis slowest, with short unambiguous labels', () => {
    const variants = expandVariants([parseVary('method.name=fedavg,fedlin'), parseVary('compression.uplink.default.fraction=1,0.1,0.01')]);
    expect(variants.length).toBe(2 * 3);
    expect(variants.map((v) => v.label)).toEqual([
      'name=fedavg fraction=1', 'name=fedavg fraction=0.1', 'name=fedavg fraction=0.01',
      'name=fedlin fraction=1', 'name=fedlin fraction=0.1', 'name=fedlin fraction=0.01',
    ]);
    expect(variants[4].overrides).toEqual(['method.name=fedlin', 'compression.uplink.default.fraction=0.1']);
    expect(new Set(variants.map((v) => v.folderName)).size).toBe(6);
    expect(variants[0].folderName).toBe('01-fedavg-1');
  });

  it('uses whole paths where last segments collide', () => {
    const [v] = expandVariants([parseVary('compression.uplink.default.fraction=0.1'), parseVary('compression.downlink.default.fraction=0.5')]);
    expect(v.label).toBe('compression.uplink.default.fraction=0.1 compression.downlink.default.fraction=0.5');
  });

  it('refuses more variants than the limit, and nothing to vary', () => {
    const values = Array.from({ length: 9 }, (_, i) => String(i + 1)).join(',');
    expect(9 * 9).toBeGreaterThan(COMPARE_LIMITS.variantsMax);
    expect(() => expandVariants([parseVary(`method.localSteps=${values}`), parseVary(`seed=${values}`)])).toThrow(/81 variants .* exceed the limit of 64/);
    expect(() => expandVariants([])).toThrow(/nothing to compare/);
    expect(() => expandVariants([parseVary('seed=1,2'), parseVary('seed=3')])).toThrow(/varied twice/);
  });
});

describe('sweepAxes', () => {
  it("reads the scenario's sweep field, writing strings bare when YAML reads them back unchanged", () => {
    const scenario = scenarioFromText(
      'name: s\nseed: 1\nproblem: {kind: least-squares}\ndata: {source: synthetic}\nclients: {count: 2}\nmethod: {name: fedavg}\nrun: {rounds: 3}\nsweep:\n  method.name: [fedavg, fedlin]\n  description: ["1", "x"]\n  compression.uplink.default.fraction: [1, 0.1]\n',
      'inline',
    );
    expect(sweepAxes(scenario)).toEqual([
      { path: 'method.name', values: ['fedavg', 'fedlin'] },
      { path: 'description', values: ['"1"', 'x'] },
      { path: 'compression.uplink.default.fraction', values: ['1', '0.1'] },
    ]);
  });
});
