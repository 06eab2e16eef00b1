// `report` reads a results folder back through the schemas that define what a run writes. A
// folder written by a real `roundwire run --in-process` parses, and writing what was parsed gives
// the very same text (rounds not evaluated hold null, and a diverged run's non-finite values are
// written as null); a damaged file is E_RESULTS_CONTENT naming the file, the line and the field.
// The diverged run is FedAvg with eta = 1e300 on the quickstart (see
// test/integration/diverged.test.ts: gradient descent on a quadratic diverges for eta > 2/L,
// common practice); a step that large overflows in the first round, so the run stops there.

import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { resultFiles } from '../../src/results/results-folder.js';
import { ReportError } from '../../src/report/report-error.js';
import { parseRunResults, type RunResultsText } from '../../src/report/run-results.js';
import { clientTimeline } from '../../src/report/run-series.js';
import type { ClientRoundRecord } from '../../src/engine/round-record.js';
import { runCli } from '../cli/run-cli.js';

const root = mkdtempSync(join(tmpdir(), 'roundwire-run-results-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));

const RUNS = {
  // Evaluated every second round: odd rounds hold a null suboptimality.
  evaluatedEverySecondRound: ['--tweak', 'run.rounds:6', '--tweak', 'run.evalEvery:2'],
  diverged: [
    ...['--tweak', 'method.name:fedavg', '--tweak', 'method.stepSize:1e300'],
    ...['--tweak', 'run.rounds:200', '--tweak', 'run.target:0'],
  ],
};

/** A results folder's files as text. */
interface FolderText {
  resolvedScenario: string;
  outcome: string;
  rounds: string;
  clients: string;
}

/** The files as `report` hands them over: the .jsonl ones line by line. */
const asRead = (text: FolderText): RunResultsText => ({
  ...text,
  rounds: text.rounds.split('\n'),
  clients: text.clients.split('\n'),
});

function textOf(dir: string): FolderText {
  const read = (file: string) => readFileSync(join(dir, file), 'utf8');
  return {
    resolvedScenario: read(resultFiles.resolvedScenario),
    outcome: read(resultFiles.outcome),
    rounds: read(resultFiles.rounds),
    clients: read(resultFiles.clients),
  };
}

const texts = new Map<string, FolderText>();
beforeAll(async () => {
  for (const [name, tweaks] of Object.entries(RUNS)) {
    const dir = join(root, name);
    const run = await runCli([
      'run',
      'scenarios/quickstart.yaml',
      '--in-process',
      '--out',
      dir,
      ...tweaks,
    ]);
    expect(run.code, run.stderr).toBe(0);
    texts.set(name, textOf(dir));
  }
}, 120_000);

/** The error parseRunResults throws for `text`, asserted to be E_RESULTS_CONTENT. */
function contentError(text: FolderText): string {
  try {
    parseRunResults(asRead(text));
  } catch (error) {
    expect(error).toBeInstanceOf(ReportError);
    expect((error as ReportError).code).toBe('E_RESULTS_CONTENT');
    return (error as Error).message;
  }
  throw new Error('parseRunResults accepted a damaged folder');
}

/** The good folder's text with line `lineNumber` (from 1) of one .jsonl file changed. */
function withLine(
  file: 'rounds' | 'clients',
  lineNumber: number,
  change: (record: Record<string, unknown>) => unknown,
): FolderText {
  const good = texts.get('evaluatedEverySecondRound')!;
  const lines = good[file].split('\n');
  lines[lineNumber - 1] = JSON.stringify(change(JSON.parse(lines[lineNumber - 1])));
  return { ...good, [file]: lines.join('\n') };
}

function withOutcome(change: (outcome: Record<string, unknown>) => void): FolderText {
  const good = texts.get('evaluatedEverySecondRound')!;
  const outcome = JSON.parse(good.outcome) as Record<string, unknown>;
  change(outcome);
  return { ...good, outcome: JSON.stringify(outcome) };
}

const jsonLines = (items: readonly unknown[]) =>
  items.map((item) => `${JSON.stringify(item)}\n`).join('');

describe('parseRunResults on folders a run wrote', () => {
  for (const name of Object.keys(RUNS)) {
    it(`${name}: parses, and what it parsed writes back to the same text`, () => {
      const text = texts.get(name)!;
      const results = parseRunResults(asRead(text));
      expect(results.scenarioName).toBe('quickstart');
      expect(results.description).toBe(
        'Heterogeneous least squares, 8 clients, FedLin with 5 local steps.',
      );
      expect(`${JSON.stringify(results.summary, null, 2)}\n`).toBe(text.outcome);
      expect(jsonLines(results.rounds)).toBe(text.rounds);
      // Client records are checked line by line and only the timeline's are kept: it is the one
      // drawn from every record of the file at once.
      const clients = text.clients
        .trimEnd()
        .split('\n')
        .map((line) => JSON.parse(line) as ClientRoundRecord);
      expect(results.timeline).toEqual(clientTimeline(results.rounds, clients));
      expect(results.timeline.clientsTotal).toBe(8);
      if (name === 'evaluatedEverySecondRound')
        expect(results.timeline.segments.length).toBeGreaterThan(0);
    });
  }

  it('holds the nulls the writer writes for rounds not evaluated, and a diverged run', () => {
    const every2 = parseRunResults(asRead(texts.get('evaluatedEverySecondRound')!));
    expect(every2.rounds.map((r) => r.suboptimality === null)).toEqual([
      false,
      true,
      false,
      true,
      false,
      true,
      false,
    ]);
    const diverged = parseRunResults(asRead(texts.get('diverged')!));
    expect(diverged.summary.stopReason).toBe('diverged');
    // A non-finite update is never folded in (README, "Results folder"): the model, and so the
    // final f - f*, are the initial ones, read back exactly.
    expect(diverged.summary.suboptimality.final).toBe(diverged.summary.suboptimality.initial);
    expect(diverged.rounds.at(-1)!.round).toBe(1);
  });
});

describe('parseRunResults on a damaged folder', () => {
  it('outcome.json that is not JSON', () => {
    const good = texts.get('evaluatedEverySecondRound')!;
    expect(contentError({ ...good, outcome: good.outcome.slice(0, 40) })).toMatch(
      /^outcome\.json: not JSON \(/,
    );
  });

  it('outcome.json without a field a run writes', () => {
    expect(contentError(withOutcome((o) => delete o.rate))).toBe(
      'outcome.json: rate: missing; expected object',
    );
  });

  it('outcome.json naming a method roundwire does not know (the charts colour by method)', () => {
    expect(contentError(withOutcome((o) => (o.method = 'newton')))).toBe(
      'outcome.json: method: expected one of "gd", "fedavg", "fedprox", "fednova", "scaffold", "fedlin", "fedsplit", got "newton"',
    );
  });

  it('rounds.jsonl with a wrong type on line 3', () => {
    const text = withLine('rounds', 3, (r) => {
      (r.bytes as { payload: { up: unknown } }).payload.up = 'many';
      return r;
    });
    expect(contentError(text)).toBe(
      'rounds.jsonl line 3: bytes.payload.up: expected number, got "many"',
    );
  });

  it('rounds.jsonl with a line that is not JSON, and one with no rounds', () => {
    const good = texts.get('evaluatedEverySecondRound')!;
    const lines = good.rounds.split('\n');
    lines[4] = lines[4].slice(0, 20);
    expect(contentError({ ...good, rounds: lines.join('\n') })).toMatch(
      /^rounds\.jsonl line 5: not JSON \(/,
    );
    expect(contentError({ ...good, rounds: '\n' })).toBe('rounds.jsonl holds no rounds');
  });

  it('clients.jsonl with a field missing on line 4', () => {
    const text = withLine('clients', 4, (r) => {
      delete r.dropped;
      return r;
    });
    expect(contentError(text)).toBe('clients.jsonl line 4: dropped: missing; expected boolean');
  });

  it('clients.jsonl whose line 2 is not a record', () => {
    expect(contentError(withLine('clients', 2, () => [1, 2]))).toBe(
      'clients.jsonl line 2: expected object, got [1,2]',
    );
  });

  it('a resolved-scenario.yaml that is not YAML, or not a scenario', () => {
    const good = texts.get('evaluatedEverySecondRound')!;
    expect(contentError({ ...good, resolvedScenario: 'name: [quickstart\n' })).toMatch(
      /^resolved-scenario\.yaml: not YAML \(/,
    );
    const badMethod = good.resolvedScenario.replace('name: fedlin', 'name: newton');
    expect(badMethod).not.toBe(good.resolvedScenario);
    expect(contentError({ ...good, resolvedScenario: badMethod })).toMatch(
      /^resolved-scenario\.yaml: method\.name: expected .*, got "newton"$/,
    );
  });
});
