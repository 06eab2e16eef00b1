// YAML or JSON text into a plain document (before validation). YAML is a superset of JSON, but
// a .json file is parsed as JSON so that its error positions are JSON's.

import { parseDocument, type Document } from 'yaml';
import { ScenarioError } from './scenario-error.js';
import { SCENARIO_TEXT_BYTES_MAX, SCENARIO_YAML_ALIASES_MAX } from './scenario-limits.js';

export function parseScenarioText(text: string, sourceName: string): unknown {
  if (Buffer.byteLength(text, 'utf8') > SCENARIO_TEXT_BYTES_MAX) {
    throw new ScenarioError(
      'E_SCENARIO_FILE',
      '',
      `${sourceName}: larger than ${SCENARIO_TEXT_BYTES_MAX} bytes, the most a scenario may hold`,
    );
  }
  if (sourceName.toLowerCase().endsWith('.json')) {
    try {
      return JSON.parse(text) as unknown;
    } catch (error) {
      throw new ScenarioError(
        'E_SCENARIO_SYNTAX',
        '',
        `${sourceName}: not valid JSON: ${(error as Error).message}`,
      );
    }
  }
  const doc = parseDocument(text, { prettyErrors: true, uniqueKeys: true });
  if (doc.errors.length > 0) {
    const first = doc.errors[0];
    const where = first.linePos
      ? ` at line ${first.linePos[0].line}, column ${first.linePos[0].col}`
      : '';
    const reason = first.message.split('\n')[0].replace(/ at line \d+, column \d+:?$/, '');
    throw new ScenarioError(
      'E_SCENARIO_SYNTAX',
      '',
      `${sourceName}: not valid YAML${where}: ${reason}`,
    );
  }
  const value = documentValue(doc, sourceName);
  if (value === null || typeof value !== 'object' || Array.isArray(value)) {
    throw new ScenarioError(
      'E_SCENARIO_SYNTAX',
      '',
      `${sourceName}: expected a mapping of settings at the top level`,
    );
  }
  return value;
}

/** The document's values; nested aliases past the limit are refused (the yaml library throws a ReferenceError). */
function documentValue(doc: Document, sourceName: string): unknown {
  try {
    return doc.toJS({ maxAliasCount: SCENARIO_YAML_ALIASES_MAX }) as unknown;
  } catch (error) {
    if (!(error instanceof ReferenceError)) throw error;
    throw new ScenarioError(
      'E_SCENARIO_SYNTAX',
      '',
      `${sourceName}: unusable YAML aliases: ${error.message} (at most ${SCENARIO_YAML_ALIASES_MAX} alias expansions)`,
    );
  }
}
