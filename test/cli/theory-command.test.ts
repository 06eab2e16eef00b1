// `roundwire theory` as a user runs it: a real process on the built CLI.
import { describe, expect, it } from 'vitest';
import { Matrix, CholeskyDecomposition } from 'ml-matrix';
import { mkdtempSync, readFileSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { runCli } from './run-cli.js';
import { formatTheoryReport } from '../../src/commands/theory-command.js';

describe('roundwire theory', () => {
  it('prints the constants as JSON with the required keys', async () => {
    const r = await runCli(['theory', 'scenarios/quickstart.yaml', '--json']);
    expect(r.code).toBe(0);
    const report = JSON.parse(r.stdout);
    for (const key of ['smoothness', 'strongConvexity', 'conditionNumber', 'heterogeneity'])
      expect(typeof report[key]).toBe('number');
    expect(report.conditionNumber).toBeCloseTo(report.smoothness / report.strongConvexity, 10);
    expect(report.optimum.gradientNorm).toBeLessThanOrEqual(1e-10);
    expect(report.clients).toHaveLength(8);
    // quickstart runs FedLin: its bound is listed as left out, with its source
    expect(report.bounds).toHaveLength(1);
    expect(report.bounds[0]).toMatchObject({ method: 'fedlin', status: 'left-out' });
    expect(report.bounds[0].source).toContain('FedLin (NeurIPS 2021)');
    expect(report.hessianAtOptimum.converged).toBe(true);
    // The table marks curvature that Lanczos left unconverged as an estimate.
    expect(formatTheoryReport(report)).not.toContain('not converged');
    const estimated = formatTheoryReport({
      ...report,
      hessianAtOptimum: { ...report.hessianAtOptimum, converged: false },
    });
    expect(estimated).toContain('Lanczos estimate: not converged within its step cap');
  });

  it('prints a readable table by default', async () => {
    const r = await runCli(['theory', 'scenarios/quickstart.yaml']);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/condition number L\/mu\s+\d/);
    expect(r.stdout).toMatch(/certificate \|grad f\(x\*\)\|/);
    expect(r.stdout).toMatch(/rate no bound: FedLin, strongly convex case/);
  });

  // The certificate the oracle reports must hold for the Newton-solved objectives on synthetic
  // data with 20 clients (the certificate threshold 1e-10 is the design's requirement).
  for (const kind of ['logistic', 'softmax']) {
    it(`certifies the ${kind} optimum to a gradient norm of at most 1e-10 with 20 clients`, async () => {
      const r = await runCli([
        'theory',
        'scenarios/quickstart.yaml',
        '--json',
        '--tweak',
        `problem.kind:${kind}`,
        '--tweak',
        'clients.count:20',
        '--tweak',
        'data.minimizerSpread:0.5',
      ]);
      expect(r.stderr).toBe('');
      const report = JSON.parse(r.stdout);
      expect(report.clientCount).toBe(20);
      expect(report.optimum.gradientNorm).toBeLessThanOrEqual(1e-10);
      expect(report.heterogeneity).toBeGreaterThan(0);
    });
  }

  it('answers --help with exit 0 and documents exit codes', async () => {
    const r = await runCli(['theory', '--help']);
    expect(r.code).toBe(0);
    expect(r.stdout).toContain('Exit codes:');
  });
});

describe('roundwire shards', () => {
  // Reproducibility in another tool: x* recomputed from the CSV files alone with ml-matrix
  // (Cholesky of the weighted normal equations) must equal the oracle's x* to 1e-9.
  it('writes CSVs from which ml-matrix recovers the oracle optimum', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'roundwire-shards-'));
    try {
      const w = await runCli(['shards', 'scenarios/quickstart.yaml', '--out', dir]);
      expect(w.code).toBe(0);
      const files = readdirSync(dir).sort();
      expect(files).toHaveLength(8);
      const t = JSON.parse(
        (await runCli(['theory', 'scenarios/quickstart.yaml', '--json'])).stdout,
      );
      const p = t.dimension as number;
      const lambda = 0.01;
      let total = 0;
      const rows: number[][] = [];
      for (const f of files) {
        const lines = readFileSync(join(dir, f), 'utf8').trim().split('\n');
        expect(lines[0].split(',')).toHaveLength(p + 1);
        for (const line of lines.slice(1)) rows.push(line.split(',').map(Number));
        total += lines.length - 1;
      }
      // weights n_i/n make f the pooled mean: (1/2n)||Ax - b||^2 + (lambda/2)||x||^2
      const a = new Matrix(rows.map((r) => r.slice(0, p)));
      const b = Matrix.columnVector(rows.map((r) => r[p]));
      const gram = a.transpose().mmul(a).div(total).add(Matrix.eye(p).mul(lambda));
      const rhs = a.transpose().mmul(b).div(total);
      const x = new CholeskyDecomposition(gram).solve(rhs).getColumn(0);
      const err = Math.hypot(...x.map((v, j) => v - t.optimum.x[j])) / Math.hypot(...x);
      expect(err).toBeLessThanOrEqual(1e-9);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});

describe('bad input exits with code 2 and one message naming the field', () => {
  const cases: [string, RegExp][] = [
    [
      'wrong-type.yaml',
      /^roundwire: data\.features: expected a positive integer <= 100000, got "twenty"$/,
    ],
    [
      'unknown-key.yaml',
      /^roundwire: method\.localStep: unknown key \(did you mean "localSteps"\?\)/,
    ],
    [
      'negative-count.yaml',
      /^roundwire: method\.localSteps: expected a positive integer, a list of positive integers or \{uniform: \[min, max\]\}, got -3$/,
    ],
    [
      'missing-field.yaml',
      /^roundwire: clients: missing; expected a mapping with keys count, weights$/,
    ],
    ['broken.yaml', /^roundwire: .*broken\.yaml: not valid YAML at line \d+, column \d+/],
  ];
  for (const [file, pattern] of cases) {
    it(file, async () => {
      const r = await runCli(['theory', `test/fixtures/bad-scenarios/${file}`]);
      expect(r.code).toBe(2);
      expect(r.stdout).toBe('');
      const lines = r.stderr.trim().split('\n');
      expect(lines).toHaveLength(1);
      expect(lines[0]).toMatch(pattern);
    });
  }

  it('a missing file', async () => {
    const r = await runCli(['theory', 'no/such/file.yaml']);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/cannot read the scenario \(ENOENT\)/);
  });

  it('an unknown option', async () => {
    const r = await runCli(['theory', 'scenarios/quickstart.yaml', '--bogus']);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/unknown option '--bogus'/);
  });

  it('a malformed --tweak', async () => {
    const r = await runCli(['theory', 'scenarios/quickstart.yaml', '--tweak', 'seed']);
    expect(r.code).toBe(2);
    expect(r.stderr).toBe(
      'roundwire: --tweak "seed": no colon; expected field:value, e.g. method.localSteps:10\n',
    );
  });
});

describe('roundwire schema', () => {
  it('the committed scenarios/schema.json is the one the schema generates', async () => {
    const r = await runCli(['schema']);
    expect(r.code).toBe(0);
    expect(r.stdout).toBe(readFileSync('scenarios/schema.json', 'utf8'));
  });
});
