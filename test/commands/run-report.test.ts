// The text summary a run prints at its end says when its prediction is local (the round map
// linearized at its limit) and says nothing of the kind for an exact (affine) one; a nonconvex
// run's gap is named as the gap to its reference run, in the summary and the progress line.
import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { formatRunSummary, runInProcessInto } from '../../src/commands/run-report.js';
import { ProgressLine } from '../../src/commands/progress.js';
import { gapIsToReference } from '../../src/report/gap-name.js';

const root = mkdtempSync(join(tmpdir(), 'roundwire-summary-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));
const quickstart = readFileSync('scenarios/quickstart.yaml', 'utf8');

function summaryText(name: string, tweaks: string[]): string {
  const scenario = scenarioFromText(quickstart, 'quickstart.yaml', ['run.rounds:20', ...tweaks]);
  const dir = join(root, name);
  return formatRunSummary(runInProcessInto(scenario, dir).summary, dir);
}

describe('the text summary of a run', () => {
  it('marks a local prediction as local, in the table and on the prediction line', () => {
    const local = summaryText('logistic', ['problem.kind:logistic']);
    expect(local).toContain('rate per round, straight fit (predicted: local, near the limit)');
    expect(local).toMatch(
      /prediction: spectral radius 0\.\d+, .*; local: the round map linearized at its limit, the rate holds once the run is near the limit/,
    );
    const exact = summaryText('least-squares', []);
    expect(exact).toMatch(/prediction: spectral radius 0\.\d+, next eigenvalue modulus [^\n;]*\n/);
    expect(exact).not.toContain('local');
  });
});

describe('a nonconvex run', () => {
  it('names its gap f - f_ref (to the reference run), never f - f*, in the summary and the progress line', () => {
    const text = readFileSync('scenarios/iris-perceptron.yaml', 'utf8');
    const scenario = scenarioFromText(text, 'iris-perceptron.yaml', ['run.rounds:5']);
    expect(gapIsToReference(scenario.problem.kind)).toBe(true);
    const dir = join(root, 'perceptron');
    const lines: string[] = [];
    const progress = new ProgressLine(
      { write: (t) => lines.push(t), isTTY: false },
      scenario.run.rounds,
      gapIsToReference(scenario.problem.kind),
    );
    const summary = formatRunSummary(
      runInProcessInto(scenario, dir, (r) => progress.update(r)).summary,
      dir,
    );
    expect(summary).toMatch(/^\s*f - f_ref\s/m);
    expect(summary).not.toMatch(/^\s*f - f\*\s/m);
    expect(lines.join('')).toContain('f-f_ref');
    expect(lines.join('')).not.toContain('f-f*');
  });
});
