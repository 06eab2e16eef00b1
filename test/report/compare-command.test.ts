// `roundwire compare` as a user runs it (the built binary). The bundled compression-sweep
// scenario has two ladders: FedAvg and FedLin, top-k uplinks at fraction 1 and 0.1 (error feedback).
// Expected orderings: FedAvg with several local steps stalls at a floor above zero on
// heterogeneous data (Pathak and Wainwright, NeurIPS 2020: its fixed points are not the
// minimizer), so above the 1e-8 target; FedLin converges linearly to x* even with sparsified
// uplinks (FedLin, NeurIPS 2021), and top-k with error feedback sends k of d entries a
// message (Stich, Cordonnier and Jaggi, NeurIPS 2018), so fewer uplink bytes to the target.
import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, rmSync, existsSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parse } from 'yaml';
import { runCli } from '../cli/run-cli.js';
import { formatNumber } from '../../src/report/text-table.js';
import type { Comparison, CompareRow, Ranking } from '../../src/report/compare-table.js';
import { compareColumns } from '../../src/report/compare-table.js';

const root = mkdtempSync(join(tmpdir(), 'roundwire-compare-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));

const quickstart = readFileSync('scenarios/quickstart.yaml', 'utf8');
/** Few rounds: these tests count variants and read their settings, not convergence. */
const SHORT = ['--tweak', 'run.rounds:4'];

function parseCsv(text: string): string[][] {
  // the fields of this file hold no commas or quotes (variant labels are field:value pairs)
  return text
    .trimEnd()
    .split('\r\n')
    .map((line) => line.split(','));
}

function readComparison(out: string): Comparison {
  return JSON.parse(readFileSync(join(out, 'compare.json'), 'utf8')) as Comparison;
}

/** The resolved scenario each variant ran, from its own results folder. */
function variantScenarios(
  out: string,
  c: Comparison,
): {
  method: { name: string; localSteps: unknown; stepSize: unknown };
  seed: number;
  run: { rounds: number };
}[] {
  return c.variants.map((row) =>
    parse(readFileSync(join(out, row.folder, 'resolved-scenario.yaml'), 'utf8')),
  );
}

async function compare(
  name: string,
  args: string[],
  file = 'scenarios/quickstart.yaml',
): Promise<{ out: string; c: Comparison; stdout: string }> {
  const out = join(root, name);
  const r = await runCli(['compare', file, ...args, '--out', out], 120_000);
  expect(r.code, r.stderr).toBe(0);
  return { out, c: readComparison(out), stdout: r.stdout };
}

describe('roundwire compare on the bundled compression ladders', () => {
  it('ranks the variants, and its table, verdict, CSV and JSON agree', async () => {
    const { out, c, stdout } = await compare('compression', [], 'scenarios/compression-sweep.yaml');
    const byLabel = new Map<string, CompareRow>(c.variants.map((row) => [row.variant, row]));
    expect([...byLabel.keys()]).toEqual([
      'name:fedavg fraction:1',
      'name:fedavg fraction:0.1',
      'name:fedlin fraction:1',
      'name:fedlin fraction:0.1',
    ]);
    const dense = byLabel.get('name:fedlin fraction:1')!;
    const sparse = byLabel.get('name:fedlin fraction:0.1')!;
    expect(sparse.roundsToTarget).not.toBeNull();
    expect(sparse.uplinkBytesToTarget!).toBeLessThan(dense.uplinkBytesToTarget!);
    for (const label of ['name:fedavg fraction:1', 'name:fedavg fraction:0.1']) {
      const fedavg = byLabel.get(label)!;
      expect(fedavg.roundsToTarget).toBeNull();
      expect(fedavg.floorMeasured!).toBeGreaterThan(c.target);
    }

    // the CSV holds the JSON's rows, column for column
    const csv = parseCsv(readFileSync(join(out, 'compare.csv'), 'utf8'));
    expect(csv[0]).toEqual(compareColumns);
    c.variants.forEach((row, i) =>
      expect(csv[i + 1]).toEqual(
        compareColumns.map((k) => (row[k] === null ? '' : String(row[k]))),
      ),
    );

    // the printed table shows the same numbers; wider than 100 columns, it folds into one block a
    // variant: "variant <label>", then "  <field> ..... <value> <unit>" lines
    const lines = stdout.split('\n');
    const withUnit = (value: number | null, unit: string) =>
      value === null ? '-' : `${formatNumber(value)} ${unit}`;
    const kilobytes = (bytes: number | null) => (bytes === null ? null : bytes / 1000);
    for (const row of c.variants) {
      const start = lines.indexOf(`variant ${row.variant}`);
      expect(start, row.variant).toBeGreaterThanOrEqual(0);
      const fields = lines
        .slice(start + 1, start + 16)
        .map((l) => /^ {2}(.+?) \.{2,} (.+)$/.exec(l)?.slice(1));
      expect(fields).toEqual([
        ['stop', row.stop],
        ['rounds', formatNumber(row.rounds)],
        ['rounds to target', withUnit(row.roundsToTarget, 'rounds')],
        ['bytes to target', withUnit(kilobytes(row.bytesToTarget), 'kB')],
        ['uplink bytes to target', withUnit(kilobytes(row.uplinkBytesToTarget), 'kB')],
        ['seconds to target', withUnit(row.secondsToTarget, 's')],
        ['rounds to target accuracy', withUnit(row.roundsToTargetAccuracy, 'rounds')],
        ['bytes to target accuracy', withUnit(kilobytes(row.bytesToTargetAccuracy), 'kB')],
        ['seconds to target accuracy', withUnit(row.secondsToTargetAccuracy, 's')],
        ['floor measured', formatNumber(row.floorMeasured)],
        ['rate measured', formatNumber(row.rateMeasured)],
        ['rate predicted', formatNumber(row.ratePredicted)],
        ['rate over window', formatNumber(row.rateOverWindow)],
        ['window status', row.windowStatus],
        ['dropped updates', withUnit(row.droppedUpdates, 'updates')],
      ]);
    }

    // the verdict names the least and the runner-up among the variants that reached the target
    const reached = c.variants.filter((row) => row.roundsToTarget !== null);
    expect(c.verdict.reachedTarget).toBe(reached.length);
    const check = (
      ranking: Ranking | null,
      key: 'bytesToTarget' | 'uplinkBytesToTarget' | 'secondsToTarget',
      title: string,
    ) => {
      const sorted = [...reached].sort((a, b) => a[key]! - b[key]!);
      expect(ranking).toEqual({
        variant: sorted[0].variant,
        value: sorted[0][key],
        runnerUp: { variant: sorted[1].variant, value: sorted[1][key] },
        margin: sorted[1][key]! - sorted[0][key]!,
        ratio: sorted[1][key]! / sorted[0][key]!,
      });
      expect(stdout).toContain(`${title}: ${ranking!.variant} (${formatNumber(ranking!.value)} `);
      expect(stdout).toContain(
        ` than runner-up ${ranking!.runnerUp!.variant}, which needs ${ranking!.ratio!.toPrecision(3)} times`,
      );
    };
    check(c.verdict.fewestBytesToTarget, 'bytesToTarget', 'fewest bytes to target');
    check(
      c.verdict.fewestUplinkBytesToTarget,
      'uplinkBytesToTarget',
      'fewest uplink bytes to target',
    );
    check(c.verdict.leastTimeToTarget, 'secondsToTarget', 'least modelled time to target');
    expect(c.verdict.fewestUplinkBytesToTarget?.variant).toBe('name:fedlin fraction:0.1');
    expect(stdout).toContain(
      `2 of 4 variants reached the target f - f* <= ${formatNumber(c.target)}`,
    );
    expect(existsSync(join(out, 'compare.html'))).toBe(true);
    for (const row of c.variants)
      expect(existsSync(join(out, row.folder, 'report.html'))).toBe(true);
    expect(stdout).not.toMatch(/\x1b\[/);
  });
});

describe('roundwire compare: ladders', () => {
  it('runs the product of two ladders: every combination once, with its field values', async () => {
    const { out, c } = await compare('product', [
      '--ladder',
      'method.name:fedavg/scaffold/fedlin',
      '--ladder',
      'method.localSteps:1/5',
      ...SHORT,
    ]);
    expect(c.variants).toHaveLength(3 * 2);
    expect(c.variants.map((v) => v.variant)).toEqual([
      'name:fedavg localSteps:1',
      'name:fedavg localSteps:5',
      'name:scaffold localSteps:1',
      'name:scaffold localSteps:5',
      'name:fedlin localSteps:1',
      'name:fedlin localSteps:5',
    ]);
    const ran = variantScenarios(out, c);
    expect(ran.map((s) => [s.method.name, s.method.localSteps])).toEqual([
      ['fedavg', 1],
      ['fedavg', 5],
      ['scaffold', 1],
      ['scaffold', 5],
      ['fedlin', 1],
      ['fedlin', 5],
    ]);
    // what no ladder moves stays as the scenario has it
    expect(new Set(ran.map((s) => s.seed))).toEqual(new Set([7]));
    expect(new Set(c.variants.map((v) => v.folder)).size).toBe(6);
  });

  it('runs a zipped ladder rung by rung (its fields paired, not their product)', async () => {
    const { out, c } = await compare('zipped', [
      '--ladder',
      'method.name+method.localSteps+method.stepSize:fedavg,1,0.05/fedlin,5,auto',
      ...SHORT,
    ]);
    expect(c.variants.map((v) => v.variant)).toEqual([
      'name:fedavg localSteps:1 stepSize:0.05',
      'name:fedlin localSteps:5 stepSize:auto',
    ]);
    expect(
      variantScenarios(out, c).map((s) => [s.method.name, s.method.localSteps, s.method.stepSize]),
    ).toEqual([
      ['fedavg', 1, 0.05],
      ['fedlin', 5, 'auto'],
    ]);
    expect(c.ladders).toEqual([
      {
        fields: ['method.name', 'method.localSteps', 'method.stepSize'],
        rungs: [
          ['fedavg', 1, 0.05],
          ['fedlin', 5, 'auto'],
        ],
      },
    ]);
  });

  it('a ladder in the scenario file and the same ladder on the command line give the same comparison', async () => {
    const file = join(root, 'with-ladders.yaml');
    writeFileSync(
      file,
      `${quickstart}\nladders:\n  - {fields: [method.name, method.localSteps], rungs: [[fedavg, 1], [fedlin, 5]]}\n  - {field: seed, rungs: [7, 8]}\n`,
    );
    const fromFile = await compare('from-file', SHORT, file);
    const fromOptions = await compare('from-options', [
      '--ladder',
      'method.name+method.localSteps:fedavg,1/fedlin,5',
      '--ladder',
      'seed:7/8',
      ...SHORT,
    ]);
    expect(fromFile.c.variants).toHaveLength(2 * 2);
    expect(fromFile.c).toEqual(fromOptions.c);
    expect(variantScenarios(fromFile.out, fromFile.c).map((s) => [s.method.name, s.seed])).toEqual([
      ['fedavg', 7],
      ['fedavg', 8],
      ['fedlin', 7],
      ['fedlin', 8],
    ]);

    // --ladder options replace the file's ladders
    const replaced = await compare(
      'replaced',
      ['--ladder', 'method.localSteps:2/3/4', ...SHORT],
      file,
    );
    expect(replaced.c.variants.map((v) => v.variant)).toEqual([
      'localSteps:2',
      'localSteps:3',
      'localSteps:4',
    ]);
  });

  it('prints compare.json with --json, and says plainly when no variant reaches the target', async () => {
    const out = join(root, 'json');
    const r = await runCli([
      'compare',
      'scenarios/quickstart.yaml',
      '--ladder',
      'method.name:fedavg/gd',
      ...SHORT,
      '--out',
      out,
      '--json',
    ]);
    expect(r.code, r.stderr).toBe(0);
    const printed = JSON.parse(r.stdout) as Comparison;
    expect(printed).toEqual(readComparison(out));
    expect(printed.verdict).toEqual({
      reachedTarget: 0,
      fewestBytesToTarget: null,
      fewestUplinkBytesToTarget: null,
      leastTimeToTarget: null,
    });
    const text = await runCli([
      'compare',
      'scenarios/quickstart.yaml',
      '--ladder',
      'method.name:fedavg',
      ...SHORT,
      '--out',
      join(root, 'text'),
    ]);
    expect(text.stdout).toContain(
      'no variant reached the target f - f* <= 1.0000e-10 within its rounds, so none is ranked',
    );
  });
});

describe('roundwire compare: bad ladders exit with 2 and one line naming the reason', () => {
  async function refused(args: string[], file = 'scenarios/quickstart.yaml'): Promise<string> {
    const out = join(root, 'bad');
    const r = await runCli(['compare', file, ...args, '--out', out]);
    expect(r.code, args.join(' ')).toBe(2);
    expect(r.stdout).toBe('');
    const lines = r.stderr.trim().split('\n');
    expect(lines, r.stderr).toHaveLength(1);
    expect(existsSync(out)).toBe(false);
    return lines[0];
  }

  it('a bad rung names the ladder and the rung, from the command line or the file alike', async () => {
    const expected =
      'roundwire: ladder method.localSteps, rung 2 (-3): expected a positive integer, a list of positive integers or {uniform: [min, max]}, got -3';
    expect(await refused(['--ladder', 'method.localSteps:1/-3'])).toBe(expected);
    const file = join(root, 'bad-rung.yaml');
    writeFileSync(
      file,
      `${quickstart}\nladders:\n  - {field: method.localSteps, rungs: [1, -3]}\n`,
    );
    expect(await refused([], file)).toBe(expected);
    // in a zipped ladder the field is named too
    expect(await refused(['--ladder', 'method.name+method.stepSize:fedavg,0.05/fedlin,-1'])).toBe(
      'roundwire: ladder method.name+method.stepSize, rung 2 (fedlin, -1): method.stepSize: expected a positive number or "auto", got -1',
    );
    expect(await refused(['--ladder', 'method.name:fedavg/newton'])).toMatch(
      /^roundwire: ladder method\.name, rung 2 \(newton\): expected one of "gd", "fedavg"/,
    );
    expect(await refused(['--ladder', 'method.nmae:fedavg/fedlin'])).toMatch(
      /^roundwire: ladder method\.nmae, rung 1 \(fedavg\): unknown key \(did you mean "name"\?\)/,
    );
    expect(await refused(['--ladder', 'compression.uplink.default.fraction:1/2'])).toBe(
      'roundwire: ladder compression.uplink.default.fraction, rung 2 (2): expected a positive number <= 1, got 2',
    );
  });

  it('bad grammar: no colon, an empty rung, a zipped rung of the wrong size', async () => {
    expect(await refused(['--ladder', 'method.name'])).toBe(
      'roundwire: --ladder "method.name": no colon; expected field:rung/rung/..., e.g. method.name:fedavg/fedlin',
    );
    expect(await refused(['--ladder', 'method.name:fedavg//fedlin'])).toBe(
      'roundwire: --ladder "method.name:fedavg//fedlin": rung 2 is empty',
    );
    expect(await refused(['--ladder', 'method.name:'])).toBe(
      'roundwire: --ladder "method.name:": no rungs after the colon',
    );
    expect(await refused(['--ladder', 'method.name+method.stepSize:fedavg,0.05/fedlin'])).toBe(
      'roundwire: --ladder "method.name+method.stepSize:fedavg,0.05/fedlin": rung 2 (fedlin) has 1 value for 2 fields; write one per field, separated by commas',
    );
    const file = join(root, 'bad-zip.yaml');
    writeFileSync(
      file,
      `${quickstart}\nladders:\n  - {fields: [method.name, method.stepSize], rungs: [[fedavg, 0.05], [fedlin]]}\n`,
    );
    expect(await refused([], file)).toBe(
      'roundwire: ladders[0].rungs[1]: expected a list of 2 values, one for each of method.name, method.stepSize; got a list of 1',
    );
  });

  it('a field moved twice, a rung given twice, too many variants, nothing to compare', async () => {
    expect(
      await refused(['--ladder', 'method.name:fedavg/fedlin', '--ladder', 'method.name:gd/fedavg']),
    ).toBe('roundwire: ladder method.name: method.name is moved by ladder method.name too');
    expect(await refused(['--ladder', 'seed:1/2/1'])).toBe(
      'roundwire: ladder seed: rungs 1 and 3 are the same (1)',
    );
    expect(
      await refused([
        '--ladder',
        'seed:1/2/3/4/5/6/7/8/9',
        '--ladder',
        'method.localSteps:1/2/3/4/5/6/7/8',
      ]),
    ).toMatch(/72 variants \(9 x 8 rungs\) exceed the limit of 64/);
    expect(await refused([])).toMatch(
      /nothing to compare: give --ladder field:rung\/rung or a ladders section in the scenario$/,
    );
  });

  it('rungs each valid alone but not together name the variant', async () => {
    // a uniform slowdown's min must not exceed its max (the scenario's own cross-field rule)
    const base = ['--tweak', 'timing.slowdown:{kind: uniform, min: 1, max: 4}'];
    const line = await refused([
      ...base,
      '--ladder',
      'timing.slowdown.min:1/3',
      '--ladder',
      'timing.slowdown.max:4/2',
    ]);
    expect(line).toBe(
      'roundwire: variant 4 (min:3 max:2): these rungs do not go together: timing.slowdown: min must not exceed max',
    );
  });
});

describe('roundwire compare --help', () => {
  it('documents the ladder grammar and the exit codes', async () => {
    const r = await runCli(['compare', '--help']);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/Exit codes:[\s\S]*2 +bad input/);
    expect(r.stdout).toContain('--ladder <field:rung/rung>');
    expect(r.stdout).toContain('--ladder method.name+method.stepSize:fedavg,0.05/fedlin,0.2');
    expect(r.stdout).toContain('--tweak <field:value>');
    expect(r.stdout).not.toMatch(/--vary|--set|sweep/);
  });
});
