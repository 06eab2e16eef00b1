// `roundwire compare` as a user runs it (the built binary). The bundled compression-sweep
// scenario sweeps FedAvg and FedLin with top-k uplinks (fraction 1 and 0.1, error feedback).
// Expected orderings: FedAvg with several local steps stalls at a floor above zero on
// heterogeneous data (Pathak and Wainwright, NeurIPS 2020: its fixed points are not the
// minimizer), so above the 1e-8 target; FedLin converges linearly to x* even with sparsified
// uplinks (FedLin, NeurIPS 2021), and top-k with error feedback sends k of d entries a
// message (Stich, Cordonnier and Jaggi, NeurIPS 2018), so fewer uplink bytes to the target.
import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, rmSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { runCli } from '../cli/run-cli.js';
import { formatNumber } from '../../src/commands/text-table.js';
import type { Comparison, CompareRow } from '../../src/report/compare-table.js';
import { compareColumns } from '../../src/report/compare-table.js';

const root = mkdtempSync(join(tmpdir(), 'roundwire-compare-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));

function parseCsv(text: string): string[][] {
  // the fields of this file hold no commas or quotes (variant labels are name=value pairs)
  return text.trimEnd().split('\r\n').map((line) => line.split(','));
}

describe('roundwire compare', () => {
  it('ranks the compression sweep, and its table, CSV and JSON agree', async () => {
    const out = join(root, 'sweep');
    const r = await runCli(['compare', 'scenarios/compression-sweep.yaml', '--out', out], 120_000);
    expect(r.code, r.stderr).toBe(0);
    const c = JSON.parse(readFileSync(join(out, 'compare.json'), 'utf8')) as Comparison;
    const byLabel = new Map<string, CompareRow>(c.rows.map((row) => [row.variant, row]));
    expect([...byLabel.keys()]).toEqual(['name=fedavg fraction=1', 'name=fedavg fraction=0.1', 'name=fedlin fraction=1', 'name=fedlin fraction=0.1']);
    const dense = byLabel.get('name=fedlin fraction=1')!;
    const sparse = byLabel.get('name=fedlin fraction=0.1')!;
    expect(sparse.roundsToTarget).not.toBeNull();
    expect(sparse.uplinkPayloadBytesToTarget!).toBeLessThan(dense.uplinkPayloadBytesToTarget!);
    for (const label of ['name=fedavg fraction=1', 'name=fedavg fraction=0.1']) {
      const fedavg = byLabel.get(label)!;
      expect(fedavg.roundsToTarget).toBeNull();
      expect(fedavg.floorMeasured!).toBeGreaterThan(c.target);
    }

    // the CSV holds the JSON's rows, column for column
    const csv = parseCsv(readFileSync(join(out, 'compare.csv'), 'utf8'));
    expect(csv[0]).toEqual(compareColumns);
    c.rows.forEach((row, i) => expect(csv[i + 1]).toEqual(compareColumns.map((k) => (row[k] === null ? '' : String(row[k])))));

    // the printed table shows the same numbers; wider than 100 columns, it folds into one block a
    // variant: "variant <label>", then "  <field> ..... <value> <unit>" lines
    const lines = r.stdout.split('\n');
    const withUnit = (value: number | null, unit: string) => (value === null ? '-' : `${formatNumber(value)} ${unit}`);
    const kilobytes = (bytes: number | null) => (bytes === null ? null : bytes / 1000);
    for (const row of c.rows) {
      const start = lines.indexOf(`variant ${row.variant}`);
      expect(start, row.variant).toBeGreaterThanOrEqual(0);
      const fields = lines.slice(start + 1, start + 11).map((l) => /^ {2}(.+?) \.{2,} (.+)$/.exec(l)?.slice(1));
      expect(fields).toEqual([
        ['stop', row.stopReason],
        ['rounds', formatNumber(row.rounds)],
        ['to target', withUnit(row.roundsToTarget, 'rounds')],
        ['payload to target', withUnit(kilobytes(row.payloadBytesToTarget), 'kB')],
        ['uplink to target', withUnit(kilobytes(row.uplinkPayloadBytesToTarget), 'kB')],
        ['time to target', withUnit(row.secondsToTarget, 's')],
        ['floor measured', formatNumber(row.floorMeasured)],
        ['rate measured', formatNumber(row.rateMeasured)],
        ['rate predicted', formatNumber(row.ratePredicted)],
        ['dropped', withUnit(row.droppedUpdates, 'updates')],
      ]);
    }

    // the verdict lines name the variants the JSON picks, which are the least among those reaching the target
    const reached = c.rows.filter((row) => row.roundsToTarget !== null);
    const least = (key: 'payloadBytesToTarget' | 'uplinkPayloadBytesToTarget' | 'secondsToTarget') => reached.reduce((a, b) => (b[key]! < a[key]! ? b : a)).variant;
    expect(c.cheapest?.variant).toBe(least('payloadBytesToTarget'));
    expect(c.cheapestUplink?.variant).toBe(least('uplinkPayloadBytesToTarget'));
    expect(c.fastest?.variant).toBe(least('secondsToTarget'));
    expect(c.cheapestUplink?.variant).toBe('name=fedlin fraction=0.1');
    expect(r.stdout).toContain(`cheapest by payload bytes to target (up and down): ${c.cheapest!.variant} (${c.cheapest!.value} bytes)`);
    expect(r.stdout).toContain(`cheapest by uplink payload bytes to target: ${c.cheapestUplink!.variant} (${c.cheapestUplink!.value} bytes)`);
    expect(r.stdout).toContain(`fastest by modelled seconds to target: ${c.fastest!.variant}`);
    expect(existsSync(join(out, 'compare.html'))).toBe(true);
    for (const row of c.rows) expect(existsSync(join(out, row.folder, 'report.html'))).toBe(true);
    expect(r.stdout).not.toMatch(/\x1b\[/);
  });

  it('prints compare.json with --json, and says when no variant reaches the target', async () => {
    const out = join(root, 'json');
    const r = await runCli(['compare', 'scenarios/quickstart.yaml', '--vary', 'method.name=fedavg,gd', '--set', 'run.rounds=5', '--out', out, '--json']);
    expect(r.code, r.stderr).toBe(0);
    const printed = JSON.parse(r.stdout) as Comparison;
    expect(printed).toEqual(JSON.parse(readFileSync(join(out, 'compare.json'), 'utf8')));
    expect(printed.cheapest).toBeNull();
    const text = await runCli(['compare', 'scenarios/quickstart.yaml', '--vary', 'method.name=fedavg', '--set', 'run.rounds=5', '--out', join(root, 'text')]);
    expect(text.stdout).toContain('none of the 1 variants reached the target 1.0000e-10');
  });

  it('exits with 2 and names the field for bad --vary input', async () => {
    const cases: [string[], RegExp][] = [
      [['--vary', 'method.nmae=fedavg,fedlin'], /method\.nmae: unknown key \(did you mean "name"\?\)/],
      [['--vary', 'method.name='], /method\.name: --vary: no values given/],
      [['--vary', 'method.name=fedavg,newton'], /method\.name: expected/],
      [['--vary', 'compression.uplink.default.fraction=1,2'], /compression\.uplink\.default\.fraction/],
      [['--vary', 'seed=1,2,3,4,5,6,7,8,9', '--vary', 'method.localSteps=1,2,3,4,5,6,7,8'], /72 variants .* exceed the limit of 64/],
    ];
    for (const [args, message] of cases) {
      const r = await runCli(['compare', 'scenarios/quickstart.yaml', ...args, '--out', join(root, 'bad')]);
      expect(r.code, args.join(' ')).toBe(2);
      expect(r.stderr).toMatch(message);
    }
    expect(existsSync(join(root, 'bad'))).toBe(false);
  });

  it('documents the exit codes in --help', async () => {
    const r = await runCli(['compare', '--help']);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/Exit codes:[\s\S]*2 +bad input/);
    expect(r.stdout).toContain('--vary');
  });
});
