// `roundwire run --in-process` and `roundwire resume --in-process`: the in-process engine with
// its records streamed into the results folder, a checkpoint every run.checkpointEveryRounds
// rounds, and SIGINT/SIGTERM handled: the round in progress finishes, a checkpoint is written,
// and the command ends with exit code 130 and the line that says how to go on. A second signal
// exits at once (the last checkpoint stays).

import type { Scenario } from '../scenario/schema.js';
import type { RoundRecord } from '../engine/round-record.js';
import type { RunOutcome, RunSummary } from '../engine/run-summary.js';
import { runInProcessStoppable } from '../engine/in-process-engine.js';
import type { Checkpoint } from '../results/checkpoint-file.js';
import { finishRun } from './run-report.js';
import { RunFiles } from './run-files.js';
import { RunInterrupted } from './run-distributed.js';

export async function runInProcessCheckpointed(
  scenario: Scenario,
  outDir: string,
  io: { err: (text: string) => void; onRound?: (record: RoundRecord) => void },
  resume: Checkpoint | null = null,
): Promise<{ outcome: RunOutcome; summary: RunSummary }> {
  const files = new RunFiles(
    outDir,
    scenario,
    resume && { round: resume.state.round, records: resume.records },
  );
  let interrupted: NodeJS.Signals | null = null;
  const onSignal = (signal: NodeJS.Signals): void => {
    if (interrupted !== null) process.exit(130);
    interrupted = signal;
    io.err(`\n${signal}: stopping after the round in progress, with a checkpoint\n`);
  };
  process.on('SIGINT', onSignal);
  process.on('SIGTERM', onSignal);
  let outcome: RunOutcome;
  try {
    outcome = await runInProcessStoppable(
      scenario,
      {
        onRound: io.onRound,
        openRecords: () => files.records(),
        checkpointEveryRounds: scenario.run.checkpointEveryRounds,
        onCheckpoint: (state) => files.keepCheckpoint(state),
        ...(resume === null ? {} : { resume: resume.state }),
      },
      () => interrupted !== null,
    );
  } finally {
    files.close();
    process.off('SIGINT', onSignal);
    process.off('SIGTERM', onSignal);
  }
  const summary = finishRun(outcome, 'in-process', outDir);
  files.ended(outcome.stopReason);
  if (interrupted !== null) throw new RunInterrupted(files.resumeAdvice(interrupted));
  return { outcome, summary };
}
