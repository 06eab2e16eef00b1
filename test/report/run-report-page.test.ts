// report.html built from a real in-process run: deterministic, self-contained, escaped. The
// scenario is the bundled quickstart (FedLin, least squares: a prediction exists), its logistic
// variant (a local prediction) and a logistic FedSplit whose inner steps stop on a gradient-norm
// test (no prediction: the round cannot be linearized).
import { afterAll, describe, expect, it } from 'vitest';
import { cpSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { runInProcessInto } from '../../src/commands/run-report.js';
import { readRunResults, writeRunReport } from '../../src/commands/report-command.js';
import { buildRunReport } from '../../src/report/run-report-page.js';
import { ReportError } from '../../src/report/report-error.js';

const root = mkdtempSync(join(tmpdir(), 'roundwire-report-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));

const hostileName = `<script>alert("name")</script> & 'co'`;
const hostileDescription = '<img src=x onerror=alert(1)>';

function runInto(dir: string, tweaks: string[]): string {
  const text = readFileSync('scenarios/quickstart.yaml', 'utf8');
  const scenario = scenarioFromText(text, 'quickstart.yaml', [
    `name:${JSON.stringify(hostileName)}`,
    `description:${JSON.stringify(hostileDescription)}`,
    'run.rounds:60',
    ...tweaks,
  ]);
  runInProcessInto(scenario, dir);
  return dir;
}

describe('run report page', () => {
  const withPrediction = runInto(join(root, 'fedlin'), []);
  const withLocalPrediction = runInto(join(root, 'logistic'), [
    'problem.kind:logistic',
    'run.rounds:20',
  ]);
  const withoutPrediction = runInto(join(root, 'fedsplit'), [
    'problem.kind:logistic',
    'method.name:fedsplit',
    'method.proxTolerance:0.001',
    'run.rounds:20',
  ]);

  it('renders the same page twice from the same folder', async () => {
    const first = await writeRunReport(withPrediction);
    const firstText = readFileSync(first, 'utf8');
    const second = await buildRunReport(readRunResults(withPrediction));
    expect(second).toBe(firstText);
  });

  it('shows the rate measured, predicted and bounded, each with its source', async () => {
    const fedlin = await buildRunReport(readRunResults(withPrediction));
    expect(fedlin).toContain('predicted (exact)');
    expect(fedlin).toContain('left out: ');
    expect(fedlin).toContain('FedLin (NeurIPS 2021)');
    const gd = await buildRunReport(
      readRunResults(
        runInto(join(root, 'gd'), ['method.name:gd', 'method.stepPolicy:fixed', 'run.rounds:20']),
      ),
    );
    for (const theorem of ['Theorem 1;', 'Theorem 2.1.15 ']) expect(gd).toContain(theorem);
  });

  it('escapes the text it takes from the scenario', async () => {
    const html = await buildRunReport(readRunResults(withPrediction));
    expect(html).not.toContain('<script');
    expect(html).not.toContain('<img');
    expect(html).toContain(
      '&lt;script&gt;alert(&quot;name&quot;)&lt;/script&gt; &amp; &#39;co&#39;',
    );
    expect(html).toContain('&lt;img src=x onerror=alert(1)&gt;');
  });

  it('is one self-contained page: six inline charts, no URL, no script', async () => {
    const html = await buildRunReport(readRunResults(withPrediction));
    expect(html.match(/<svg\b/g)?.length).toBe(6);
    expect(html).not.toMatch(/(?:https?|wss?|ftp):|\/\/[A-Za-z]/i);
    expect(html).not.toMatch(/\b(?:src|href)\s*=\s*["'](?!#)/i);
    // ids are prefixed per chart, so no two elements share one
    const ids = [...html.matchAll(/\sid="([^"]+)"/g)].map((m) => m[1]);
    expect(new Set(ids).size).toBe(ids.length);
  });

  it('draws the predicted trajectory, with the asymptotic rate and floor where the summary has them', async () => {
    const predicted = await buildRunReport(readRunResults(withPrediction));
    expect(predicted).toContain('predicted: the ideal round map from x0');
    expect(predicted).not.toContain('No prediction is drawn');
    const plain = await buildRunReport(readRunResults(withoutPrediction));
    // This run has its ideal run drawn, but no asymptotic rate or floor.
    expect(plain).toContain('predicted: the ideal round map from x0');
    expect(plain).toContain(
      'No asymptotic rate or floor is predicted: FedSplit stops its inner steps on a gradient-norm test (proxTolerance &gt; 0), a branch the linearized round cannot follow.',
    );
    // A logistic FedLin run's prediction is local, and the page says so beside the rate.
    const local = await buildRunReport(readRunResults(withLocalPrediction));
    expect(local).toContain('rate per round, straight fit (predicted: local, near the limit)');
    expect(local).toContain(
      '(local: the round map linearized at its limit, a rate that holds once the run is near the limit)',
    );
    expect(predicted).not.toContain('predicted: local');
  });

  it('refuses a folder that is not a results folder, naming the file', () => {
    expect(() => readRunResults(join(root, 'missing'))).toThrow(/resolved-scenario\.yaml/);
  });

  it('names a missing .jsonl file, read line by line, with the same error', () => {
    const partial = join(root, 'without-clients');
    cpSync(withoutPrediction, partial, { recursive: true });
    rmSync(join(partial, 'clients.jsonl'));
    let caught: unknown;
    try {
      readRunResults(partial);
    } catch (error) {
      caught = error;
    }
    expect(caught).toBeInstanceOf(ReportError);
    expect((caught as ReportError).code).toBe('E_RESULTS_FILE');
    expect((caught as Error).message).toMatch(
      /clients\.jsonl: cannot read it \(ENOENT\); is .* a results folder\?$/,
    );
  });
});
