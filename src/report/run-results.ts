// What a report reads from a results folder, parsed from the files' text. Reading the files is
// the command's job (src/commands/report-command.ts); this module stays pure. Each file is parsed
// once, with the schemas that define what a run writes (src/engine/round-record.ts,
// src/engine/run-summary.ts, src/scenario/schema.ts); a file that does not hold it is an
// E_RESULTS_CONTENT naming the file, the line (.jsonl) and the field. The .jsonl files come as
// lines, read one at a time: every client record is checked, but only those the timeline draws
// are kept, so that clients.jsonl (clients x rounds lines) never sits in memory whole.

import { parse } from 'yaml';
import type { z } from 'zod';
import {
  clientRoundRecordSchema,
  roundRecordSchema,
  type RoundRecord,
} from '../engine/round-record.js';
import { runSummarySchema, type RunSummary } from '../engine/run-summary.js';
import { ScenarioError } from '../scenario/scenario-error.js';
import { showValue, validateScenario } from '../scenario/validate-scenario.js';
import type { Scenario } from '../scenario/schema.js';
import { ReportError } from './report-error.js';
import { clientTimeline, type Timeline } from './run-series.js';

export interface RunResults {
  scenarioName: string;
  description: string | null;
  summary: RunSummary;
  rounds: RoundRecord[];
  /** the per-client timeline of the last rounds, built while clients.jsonl was read */
  timeline: Timeline;
}

/**
 * A results folder's files (README.md, "Results folder"): the small ones as text, the .jsonl ones
 * as their lines (blank lines included, so that errors name the right line), read once.
 */
export interface RunResultsText {
  resolvedScenario: string;
  outcome: string;
  rounds: Iterable<string>;
  clients: Iterable<string>;
}

function valueAt(input: unknown, path: readonly PropertyKey[]): unknown {
  let value = input;
  for (const key of path) {
    if (value === null || typeof value !== 'object' || !Object.hasOwn(value, key)) return undefined;
    value = (value as Record<PropertyKey, unknown>)[key];
  }
  return value;
}

function fieldPath(path: readonly PropertyKey[]): string {
  return path
    .map((key, i) => (typeof key === 'number' ? `[${key}]` : `${i > 0 ? '.' : ''}${String(key)}`))
    .join('');
}

/** "bytes.payload.up: expected number, got "x"": the field, what a run writes there, what came. */
function describeIssue(issue: z.core.$ZodIssue, input: unknown): string {
  const given = valueAt(input, issue.path);
  let expected: string;
  if (issue.code === 'invalid_type') expected = `expected ${issue.expected}`;
  else if (issue.code === 'invalid_value')
    expected = `expected one of ${issue.values.map((v) => JSON.stringify(v)).join(', ')}`;
  else expected = issue.message;
  const what =
    given === undefined && issue.code === 'invalid_type'
      ? `missing; ${expected}`
      : `${expected}, got ${showValue(given)}`;
  const field = fieldPath(issue.path);
  return field === '' ? what : `${field}: ${what}`;
}

/** One JSON value -> the schema's output; `where` names the file (and line) in the error. */
function parseJson<T>(schema: z.ZodType<T, unknown>, text: string, where: string): T {
  let input: unknown;
  try {
    input = JSON.parse(text);
  } catch (error) {
    throw new ReportError('E_RESULTS_CONTENT', `${where}: not JSON (${(error as Error).message})`);
  }
  const result = schema.safeParse(input);
  if (!result.success) {
    throw new ReportError(
      'E_RESULTS_CONTENT',
      `${where}: ${describeIssue(result.error.issues[0], input)}`,
    );
  }
  return result.data;
}

/** One JSON value a line, blank lines skipped; lines are counted from 1. */
function* parseJsonLines<T>(
  schema: z.ZodType<T, unknown>,
  lines: Iterable<string>,
  file: string,
): Generator<T, void, undefined> {
  let lineNumber = 0;
  for (const line of lines) {
    lineNumber++;
    if (line.trim() !== '') yield parseJson(schema, line, `${file} line ${lineNumber}`);
  }
}

const RESOLVED_SCENARIO = 'resolved-scenario.yaml';

function parseResolvedScenario(text: string): Scenario {
  let document: unknown;
  try {
    document = parse(text);
  } catch (error) {
    const reason = (error as Error).message.split('\n')[0];
    throw new ReportError('E_RESULTS_CONTENT', `${RESOLVED_SCENARIO}: not YAML (${reason})`);
  }
  try {
    return validateScenario(document);
  } catch (error) {
    if (!(error instanceof ScenarioError)) throw error;
    throw new ReportError('E_RESULTS_CONTENT', `${RESOLVED_SCENARIO}: ${error.message}`);
  }
}

export function parseRunResults(text: RunResultsText): RunResults {
  const summary = parseJson(runSummarySchema, text.outcome, 'outcome.json');
  const scenario = parseResolvedScenario(text.resolvedScenario);
  const rounds = [...parseJsonLines(roundRecordSchema, text.rounds, 'rounds.jsonl')];
  if (rounds.length === 0)
    throw new ReportError('E_RESULTS_CONTENT', 'rounds.jsonl holds no rounds');
  const clients = parseJsonLines(clientRoundRecordSchema, text.clients, 'clients.jsonl');
  return {
    scenarioName: scenario.name,
    description: scenario.description ?? null,
    summary,
    rounds,
    timeline: clientTimeline(rounds, clients),
  };
}
