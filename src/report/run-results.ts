// What a report reads from a results folder, parsed from the files' text. Reading the files is
// the command's job (src/commands/report-command.ts); this module stays pure.

import { parse } from 'yaml';
import type { ClientRoundRecord, RoundRecord } from '../engine/round-record.js';
import type { RunSummary } from '../engine/run-summary.js';
import { isMethodName, METHOD_NAMES } from './palette.js';
import { ReportError } from './report-error.js';

export interface RunResults {
  scenarioName: string;
  description: string | null;
  summary: RunSummary;
  rounds: RoundRecord[];
  clients: ClientRoundRecord[];
}

/** The text of a results folder's files, by file (README.md, "Results folder"). */
export interface RunResultsText {
  resolvedScenario: string;
  outcome: string;
  rounds: string;
  clients: string;
}

function jsonLines<T>(text: string, file: string): T[] {
  const items: T[] = [];
  text.split('\n').forEach((line, i) => {
    if (line.trim() === '') return;
    try {
      items.push(JSON.parse(line) as T);
    } catch {
      throw new ReportError('E_RESULTS_CONTENT', `${file}: line ${i + 1} is not JSON`);
    }
  });
  return items;
}

function isRecord(value: unknown): value is Record<string, unknown> {
  return value !== null && typeof value === 'object' && !Array.isArray(value);
}

export function parseRunResults(text: RunResultsText): RunResults {
  let summary: unknown;
  try {
    summary = JSON.parse(text.outcome);
  } catch {
    throw new ReportError('E_RESULTS_CONTENT', 'outcome.json is not JSON');
  }
  if (
    !isRecord(summary) ||
    !isRecord(summary.rate) ||
    !isRecord(summary.floor) ||
    !isRecord(summary.suboptimality) ||
    typeof summary.clock !== 'string'
  ) {
    throw new ReportError(
      'E_RESULTS_CONTENT',
      'outcome.json lacks the fields a run writes (rate, floor, suboptimality, clock)',
    );
  }
  // The charts draw a run in its method's colour, so the method must be one roundwire knows.
  if (typeof summary.method !== 'string' || !isMethodName(summary.method)) {
    throw new ReportError(
      'E_RESULTS_CONTENT',
      `outcome.json: method ${JSON.stringify(summary.method)} is not one of ${METHOD_NAMES.join(', ')}`,
    );
  }
  const scenario: unknown = parse(text.resolvedScenario);
  const rounds = jsonLines<RoundRecord>(text.rounds, 'rounds.jsonl');
  if (rounds.length === 0)
    throw new ReportError('E_RESULTS_CONTENT', 'rounds.jsonl holds no rounds');
  for (const r of rounds) {
    if (
      !isRecord(r) ||
      typeof r.round !== 'number' ||
      !isRecord(r.bytes) ||
      !isRecord(r.localSteps)
    ) {
      throw new ReportError(
        'E_RESULTS_CONTENT',
        'rounds.jsonl: a line lacks round, bytes or localSteps',
      );
    }
  }
  const clients = jsonLines<ClientRoundRecord>(text.clients, 'clients.jsonl');
  const run = summary as unknown as RunSummary;
  const name =
    isRecord(scenario) && typeof scenario.name === 'string' ? scenario.name : run.scenario;
  const description =
    isRecord(scenario) && typeof scenario.description === 'string' ? scenario.description : null;
  return { scenarioName: name, description, summary: run, rounds, clients };
}
