// `roundwire report <results-folder>`: report.html from a results folder, and the same page
// written at the end of every run.

import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { ResultsFolderError, resultFiles } from '../results/results-folder.js';
import { readLines } from '../results/record-lines.js';
import { ReportError } from '../report/report-error.js';
import { parseRunResults, type RunResults } from '../report/run-results.js';
import { buildRunReport } from '../report/run-report-page.js';

export const reportFileName = 'report.html';

function readResultsFile(dir: string, file: string): string {
  try {
    return readFileSync(join(dir, file), 'utf8');
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code ?? (error as Error).message;
    throw new ReportError(
      'E_RESULTS_FILE',
      `${join(dir, file)}: cannot read it (${code}); is ${dir} a results folder?`,
    );
  }
}

/** The lines of a .jsonl results file, read a chunk at a time (src/results/record-lines.ts). */
function* resultsFileLines(dir: string, file: string): Generator<string, void, undefined> {
  try {
    yield* readLines(join(dir, file));
  } catch (error) {
    if (!(error instanceof ResultsFolderError)) throw error;
    throw new ReportError('E_RESULTS_FILE', `${error.message}; is ${dir} a results folder?`);
  }
}

export function readRunResults(dir: string): RunResults {
  return parseRunResults({
    resolvedScenario: readResultsFile(dir, resultFiles.resolvedScenario),
    outcome: readResultsFile(dir, resultFiles.outcome),
    rounds: resultsFileLines(dir, resultFiles.rounds),
    clients: resultsFileLines(dir, resultFiles.clients),
  });
}

/** Writes the report of the results folder `dir` to `outFile` (default dir/report.html); returns its path. */
export async function writeRunReport(
  dir: string,
  outFile: string = join(dir, reportFileName),
): Promise<string> {
  writeFileSync(outFile, await buildRunReport(readRunResults(dir)));
  return outFile;
}
