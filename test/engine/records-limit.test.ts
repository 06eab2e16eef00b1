// The records limit (src/engine/records-limit.ts): clients.jsonl grows with rounds x
// participants x exchanges, so a run that could write more than CLIENT_RECORDS_MAX lines is
// refused when it is planned, before any shard is built.
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { ScenarioError } from '../../src/scenario/scenario-error.js';
import {
  assertRecordsFit,
  clientRecordsOf,
  CLIENT_RECORDS_MAX,
} from '../../src/engine/records-limit.js';
import { assertPlannable } from '../../src/engine/run-plan.js';
import { codeOf } from '../support/error-code.js';

const quickstart = readFileSync('scenarios/quickstart.yaml', 'utf8');
const scenario = (tweaks: string[]) => scenarioFromText(quickstart, 'quickstart.yaml', tweaks);

describe('records limit', () => {
  it('counts one line per client per exchange per round', () => {
    // quickstart: FedLin (two exchanges), 8 clients, all taking part.
    expect(clientRecordsOf(scenario(['run.rounds:100']))).toBe(100 * 8 * 2);
    // Half the clients a round: 4 of 8.
    expect(clientRecordsOf(scenario(['run.rounds:100', 'method.participation:0.5']))).toBe(
      100 * 4 * 2,
    );
  });

  it('accepts the limit itself and refuses past it, naming the product and the limit', () => {
    const atLimit = scenario(['clients.count:10000', 'method.name:fedavg', 'run.rounds:10000']);
    expect(clientRecordsOf(atLimit)).toBe(CLIENT_RECORDS_MAX);
    expect(() => assertRecordsFit(atLimit)).not.toThrow();
    const past = scenario(['clients.count:10000', 'method.name:fedavg', 'run.rounds:10001']);
    expect(codeOf(() => assertPlannable(past), ScenarioError)).toBe('E_SCENARIO_RECORDS');
    expect(() => assertRecordsFit(past)).toThrow(
      /^run\.rounds: 10001 rounds x 10000 clients a round x 1 exchange would write 100010000 client records \(clients\.jsonl, about 26 GB\), above the limit of 100000000; use fewer rounds or clients$/,
    );
  });
});
