// `roundwire resume <results-folder>`: goes on with an interrupted run (SIGINT, SIGTERM, a
// killed process) from checkpoint.bin in its results folder. The scenario is the folder's
// resolved-scenario.yaml; the checkpoint must be of that scenario's plan (plan hash), whole and
// of this format version, and its state must fit the plan's runtimes, or the command refuses it
// with exit code 2 before anything runs. The records are cut back to the checkpoint's round and
// appended from there, so the folder ends as an uninterrupted run's would.

import { existsSync } from 'node:fs';
import { join } from 'node:path';
import type { Scenario } from '../scenario/schema.js';
import { loadScenarioFile } from '../scenario/load-scenario.js';
import { planFor } from '../engine/in-process-engine.js';
import { checkClientSnapshot } from '../engine/client-runtime.js';
import { ServerRuntime } from '../engine/server-runtime.js';
import { StateTreeError } from '../base/state-tree.js';
import { resultFiles } from '../results/results-folder.js';
import {
  CHECKPOINT_FILE,
  CheckpointError,
  readCheckpoint,
  type Checkpoint,
} from '../results/checkpoint-file.js';

export interface RunToResume {
  scenario: Scenario;
  checkpoint: Checkpoint;
}

/** The scenario and checkpoint of `dir`, checked against each other; throws CheckpointError. */
export function loadRunToResume(dir: string): RunToResume {
  const scenarioFile = join(dir, resultFiles.resolvedScenario);
  if (!existsSync(scenarioFile) || !existsSync(join(dir, CHECKPOINT_FILE)))
    throw new CheckpointError(
      'E_CHECKPOINT_MISSING',
      `${dir}: no run to resume (a results folder with ${resultFiles.resolvedScenario} and ${CHECKPOINT_FILE} is needed)`,
    );
  const scenario = loadScenarioFile(scenarioFile);
  const { plan } = planFor(scenario);
  const checkpoint = readCheckpoint(dir, plan.planHash);
  const { state } = checkpoint;
  const file = join(dir, CHECKPOINT_FILE);
  try {
    new ServerRuntime(plan).restore(state.server);
    if (state.clients.length !== plan.clientCount)
      throw new StateTreeError(
        'E_STATE_TREE',
        `clients: ${state.clients.length} states for ${plan.clientCount} clients`,
      );
    state.clients.forEach((snapshot, id) => checkClientSnapshot(plan, id, snapshot));
  } catch (error) {
    if (!(error instanceof StateTreeError)) throw error;
    throw new CheckpointError(
      'E_CHECKPOINT_DAMAGED',
      `${file}: damaged checkpoint (its state does not fit the plan: ${error.message})`,
    );
  }
  return { scenario, checkpoint };
}
