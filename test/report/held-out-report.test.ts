// A held-out test part end to end in one in-process run (the bundled quickstart as a logistic
// problem, a quarter of each client's rows held out, a target accuracy): every evaluated record
// carries the test scores, recomputed here from the model and the test rows with a plain loop;
// outcome.json takes the last of them and the first round at the target accuracy; the report
// shows the pooled, mean and worst-client accuracy. The same run without a test part records
// no held-out field at all.
import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { formatRunSummary, runInProcessInto } from '../../src/commands/run-report.js';
import { readRunResults } from '../../src/commands/report-command.js';
import { buildRunReport } from '../../src/report/run-report-page.js';
import { buildAllTestShards } from '../../src/data/build-shard.js';
import { resultFiles } from '../../src/results/results-folder.js';
import type { Scenario } from '../../src/scenario/schema.js';

const root = mkdtempSync(join(tmpdir(), 'roundwire-held-out-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));

/**
 * Not a published figure: a level this run first crosses after round 0 (its test accuracy goes
 * from about 0.5, a guess, to about 0.7), so that the round it is reached is a real search.
 */
const TARGET_ACCURACY = 0.7;

function runInto(dir: string, tweaks: string[]): Scenario {
  const text = readFileSync('scenarios/quickstart.yaml', 'utf8');
  const scenario = scenarioFromText(text, 'quickstart.yaml', [
    'problem.kind:logistic',
    'run.rounds:15',
    'run.target:0',
    ...tweaks,
  ]);
  runInProcessInto(scenario, dir);
  return scenario;
}

describe('a run with a held-out test part', () => {
  const dir = join(root, 'held-out');
  const scenario = runInto(dir, [
    'data.testFraction:0.25',
    `run.targetAccuracy:${TARGET_ACCURACY}`,
  ]);
  const results = readRunResults(dir);

  it('records test loss and accuracy as a plain loop over the test rows finds them', () => {
    const model = new Float64Array(
      new Uint8Array(readFileSync(join(dir, resultFiles.modelBinary))).buffer,
    );
    let correct = 0;
    let rows = 0;
    let lossSum = 0;
    const perClient: number[] = [];
    for (const shard of buildAllTestShards(scenario)) {
      let clientCorrect = 0;
      for (let s = 0; s < shard.sampleCount; s++) {
        let z = 0;
        for (let j = 0; j < shard.featureCount; j++)
          z += shard.features[s * shard.featureCount + j] * model[j];
        const label = shard.targets[s];
        if ((z > 0 ? 1 : 0) === label) clientCorrect++;
        // log(1 + e^-z) for label 1, log(1 + e^z) for label 0
        lossSum += Math.log1p(Math.exp(label === 1 ? -z : z));
      }
      if (shard.sampleCount > 0) perClient.push(clientCorrect / shard.sampleCount);
      correct += clientCorrect;
      rows += shard.sampleCount;
    }
    const last = results.rounds[results.rounds.length - 1].heldOut!;
    expect(rows).toBeGreaterThan(0);
    expect(last.accuracy).toBe(correct / rows);
    expect(last.loss!).toBeCloseTo(lossSum / rows, 12);
    const c = last.clientAccuracy!;
    expect(c.worst).toBe(Math.min(...perClient));
    expect(c.mean).toBeCloseTo(perClient.reduce((a, b) => a + b, 0) / perClient.length, 14);
    expect(c.range).toBeCloseTo(Math.max(...perClient) - Math.min(...perClient), 14);
    expect(results.rounds.every((r) => r.heldOut !== undefined)).toBe(true);
  });

  it('summarises the last scores and the first round at the target accuracy', () => {
    const s = results.summary.heldOut!;
    expect(s.final).toEqual(results.rounds[results.rounds.length - 1].heldOut);
    expect(s.targetAccuracy).toBe(TARGET_ACCURACY);
    const first = results.rounds.find((r) => r.heldOut!.accuracy! >= TARGET_ACCURACY);
    expect(first).toBeDefined();
    expect(first!.round).toBeGreaterThan(0);
    expect(s.roundsToTargetAccuracy).toBe(first!.round);
    expect(s.toTargetAccuracy.virtualSeconds).toBe(first!.virtualSeconds);
    const printed = formatRunSummary(results.summary, dir);
    expect(printed).toContain(
      `target test accuracy ${TARGET_ACCURACY}: reached at round ${first!.round}`,
    );
    expect(printed).toContain(`(client ${s.final.clientAccuracy!.worstClientId})`);
  });

  it('shows the pooled, mean and worst-client accuracy in the report', async () => {
    const page = await buildRunReport(results);
    expect(page).toContain('Held-out test set');
    expect(page).toContain('test accuracy, mean over clients');
    expect(page).toContain(
      `test accuracy, worst client (client ${results.summary.heldOut!.final.clientAccuracy!.worstClientId})`,
    );
    expect(page).toContain('Test accuracy against rounds: pooled, mean client and worst client');
  });

  it('records nothing held out when the scenario holds nothing out', () => {
    const plain = join(root, 'plain');
    runInto(plain, []);
    const text = readFileSync(join(plain, resultFiles.rounds), 'utf8');
    expect(text).not.toContain('heldOut');
    expect(readRunResults(plain).summary.heldOut).toBeUndefined();
  });
});
