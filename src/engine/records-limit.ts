// The records a run may write: clients.jsonl takes one line per client per exchange per round, so
// its size is a product of the scenario's sizes (rounds x participants x exchanges) that no
// single field's maximum bounds. A run whose records could outgrow the disk is refused before it
// starts, like one that could outgrow memory.

import type { Scenario } from '../scenario/schema.js';
import { ScenarioError } from '../scenario/scenario-error.js';
import { methodByName } from '../algorithm/registry.js';
import { participantCount } from '../timing/participation.js';

/**
 * Client records (clients.jsonl lines) a run may write: 10^8, about 26 GB at the 260 bytes a
 * line measured on a dense run (CLIENT_RECORD_BYTES), e.g. 10,000 clients for 10,000 rounds or 8
 * clients for 1,000,000 rounds of a two-exchange method. README.md, "Limits", documents it.
 */
export const CLIENT_RECORDS_MAX = 100_000_000;
/** Bytes of one clients.jsonl line, measured on a run of 8 clients (a typical line). */
export const CLIENT_RECORD_BYTES = 260;

/** clients.jsonl lines the run writes if it runs every round (run.rounds is a maximum). */
export function clientRecordsOf(scenario: Scenario): number {
  const perRound = participantCount(scenario.method.participation, scenario.clients.count);
  return scenario.run.rounds * perRound * methodByName(scenario.method.name).exchanges.length;
}

/** Refuses a scenario whose records could pass CLIENT_RECORDS_MAX (E_SCENARIO_RECORDS, exit code 2). */
export function assertRecordsFit(scenario: Scenario): void {
  const records = clientRecordsOf(scenario);
  if (records <= CLIENT_RECORDS_MAX) return;
  const perRound = participantCount(scenario.method.participation, scenario.clients.count);
  const exchanges = methodByName(scenario.method.name).exchanges.length;
  const gigabytes = (records * CLIENT_RECORD_BYTES) / 1e9;
  throw new ScenarioError(
    'E_SCENARIO_RECORDS',
    'run.rounds',
    `${scenario.run.rounds} rounds x ${perRound} clients a round x ${exchanges} exchange${exchanges === 1 ? '' : 's'} would write ${records} client records (clients.jsonl, about ${gigabytes.toFixed(0)} GB), above the limit of ${CLIENT_RECORDS_MAX}; use fewer rounds or clients`,
  );
}
