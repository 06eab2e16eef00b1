// A run with random rounds carries its predicted band from the engine to the page: outcome.json's
// `band` (parsed back through its schema by `report`), the final table's line, and report.html's
// shaded areas behind the curve against rounds. A deterministic run has none of them. Real
// in-process runs of the bundled quickstart, made random by tweaks.
import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { formatRunSummary, runInProcessInto } from '../../src/commands/run-report.js';
import { readRunResults } from '../../src/commands/report-command.js';
import { buildRunReport } from '../../src/report/run-report-page.js';
import { BAND_REPLICAS_DEFAULT } from '../../src/engine/monte-carlo-band.js';

const root = mkdtempSync(join(tmpdir(), 'roundwire-band-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));

function runInto(name: string, tweaks: string[]) {
  const text = readFileSync('scenarios/quickstart.yaml', 'utf8');
  const scenario = scenarioFromText(text, 'quickstart.yaml', [
    'run.rounds:60',
    'run.target:0',
    ...tweaks,
  ]);
  const dir = join(root, name);
  const { summary } = runInProcessInto(scenario, dir);
  return { dir, summary };
}

describe('the band from outcome.json to report.html', () => {
  const random = runInto('minibatch-gd', [
    'method.name:gd',
    'method.localSteps:1',
    'method.gradient:{minibatch: 8}',
  ]);
  const deterministic = runInto('gd', ['method.name:gd']);

  it('outcome.json holds the band, read back through its schema', () => {
    const band = readRunResults(random.dir).summary.band;
    expect(band?.available).toBe(true);
    expect(band?.replicas).toBe(BAND_REPLICAS_DEFAULT);
    const length = band!.rounds.length;
    expect(length).toBe(61);
    for (const series of [band!.mean, band!.meanLow, band!.meanHigh, band!.singleRunLow])
      expect(series).toHaveLength(length);
    expect(band!.stationary?.window).toEqual([45, 60]);
    expect(band!.stationary?.measured).toBeGreaterThan(0);
    // gd with minibatches and one full step a round on least squares at d = 20: the closed form applies
    expect(band!.closedForm.floor).toBeGreaterThan(0);
    expect(readRunResults(deterministic.dir).summary.band).toBeUndefined();
  });

  it('the final table says where the run lies against the band', () => {
    expect(formatRunSummary(random.summary, random.dir)).toMatch(
      /band over rounds 45-60 .*measured .* (inside|above|below) the single-run 95% band/,
    );
    expect(formatRunSummary(deterministic.summary, deterministic.dir)).not.toMatch(/band over/);
  });

  it('report.html shades the band behind the curve against rounds, and only there', async () => {
    const html = await buildRunReport(readRunResults(random.dir));
    expect(html).toContain('Shaded, against rounds');
    expect(html.match(/mark-area/g)?.length).toBe(2);
    const plain = await buildRunReport(readRunResults(deterministic.dir));
    expect(plain).not.toContain('mark-area');
  });
});
