// The results folder of a run, the same layout for the in-process engine and the coordinator;
// README.md ("Results folder") is the one description of every file in it. rounds.jsonl and
// clients.jsonl are written as the rounds happen (record-stream.ts), the rest here at the end;
// report.html is added by src/commands/report-command.ts. src/results is the one part of src/
// that writes run results; the core computes, this records.

import { accessSync, constants, mkdirSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { stringify } from 'yaml';
import type { Scenario } from '../scenario/schema.js';
import { CodedError } from '../base/coded-error.js';

/** The results folder cannot be created or written. */
export class ResultsFolderError extends CodedError<'E_RESULTS_FOLDER'> {}

export const resultFiles = {
  resolvedScenario: 'resolved-scenario.yaml',
  rounds: 'rounds.jsonl',
  clients: 'clients.jsonl',
  outcome: 'outcome.json',
  modelJson: 'model.json',
  modelBinary: 'model.f64',
} as const;

/** What a run adds to its folder at the end, beside the records streamed while it ran. */
export interface ResultsPayload {
  scenario: Scenario;
  /** outcome.json: measured beside predicted (RunSummary, with distributed details) */
  outcome: unknown;
  finalModel: Float64Array;
}

/** A results folder name that sorts by time and says what ran: <scenario>-<method>-<utc stamp>. */
export function defaultResultsDir(scenario: Scenario, now: Date): string {
  const stamp = now.toISOString().replace(/[-:]/g, '').replace(/\.\d+Z$/, 'Z');
  return join('results', `${scenario.name.replace(/[^A-Za-z0-9_.-]+/g, '_')}-${scenario.method.name}-${stamp}`);
}

/**
 * Checks that the results folder can be created and written (creating it, then removing what it
 * created), so that a bad --out ends the command before the run rather than after it. Throws
 * ResultsFolderError naming --out.
 */
export function prepareResultsFolder(dir: string): void {
  try {
    const created = mkdirSync(dir, { recursive: true });
    accessSync(dir, constants.W_OK);
    // Only a check: a run refused later (a bad plan, say) leaves no empty folder behind. The
    // writers create the folder again when there is something to write.
    if (created !== undefined) rmSync(created, { recursive: true });
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code ?? (error as Error).message;
    throw new ResultsFolderError('E_RESULTS_FOLDER', `--out ${dir}: cannot create or write the results folder (${code})`);
  }
}

export function writeResultsFolder(dir: string, payload: ResultsPayload): void {
  mkdirSync(dir, { recursive: true });
  writeFileSync(join(dir, resultFiles.resolvedScenario), stringify(payload.scenario));
  writeFileSync(join(dir, resultFiles.outcome), `${JSON.stringify(payload.outcome, null, 2)}\n`);
  writeFileSync(join(dir, resultFiles.modelJson), `${JSON.stringify({ dim: payload.finalModel.length, x: Array.from(payload.finalModel) })}\n`);
  const bytes = new Uint8Array(payload.finalModel.length * 8);
  const view = new DataView(bytes.buffer);
  payload.finalModel.forEach((v, j) => view.setFloat64(j * 8, v, true));
  writeFileSync(join(dir, resultFiles.modelBinary), bytes);
}
