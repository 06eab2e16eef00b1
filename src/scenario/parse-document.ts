// YAML or JSON text into a plain document (before validation). YAML is a superset of JSON, but
// a .json file is parsed as JSON so that its error positions are JSON's.

import { parseDocument } from 'yaml';
import { ScenarioError } from './scenario-error.js';

/** Largest scenario text accepted; a scenario is a page of settings, not data. */
export const scenarioTextBytesMax = 1_000_000;

export function parseScenarioText(text: string, sourceName: string): unknown {
  if (text.length > scenarioTextBytesMax) {
    throw new ScenarioError('E_SCENARIO_FILE', '', `${sourceName}: larger than ${scenarioTextBytesMax} bytes`);
  }
  if (sourceName.toLowerCase().endsWith('.json')) {
    try {
      return JSON.parse(text) as unknown;
    } catch (error) {
      throw new ScenarioError('E_SCENARIO_SYNTAX', '', `${sourceName}: not valid JSON: ${(error as Error).message}`);
    }
  }
  const doc = parseDocument(text, { prettyErrors: true, uniqueKeys: true });
  if (doc.errors.length > 0) {
    const first = doc.errors[0];
    const where = first.linePos ? ` at line ${first.linePos[0].line}, column ${first.linePos[0].col}` : '';
    const reason = first.message.split('\n')[0].replace(/ at line \d+, column \d+:?$/, '');
    throw new ScenarioError('E_SCENARIO_SYNTAX', '', `${sourceName}: not valid YAML${where}: ${reason}`);
  }
  const value: unknown = doc.toJS({ maxAliasCount: 100 });
  if (value === null || typeof value !== 'object' || Array.isArray(value)) {
    throw new ScenarioError('E_SCENARIO_SYNTAX', '', `${sourceName}: expected a mapping of settings at the top level`);
  }
  return value;
}
