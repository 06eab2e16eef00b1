// From a file (or text) and overrides to a complete, validated scenario.

import { readFileSync } from 'node:fs';
import type { Scenario } from './schema.js';
import { parseScenarioText } from './parse-document.js';
import { applyOverride, parseOverride } from './overrides.js';
import { validateScenario } from './validate-scenario.js';
import { ScenarioError } from './scenario-error.js';

export function scenarioFromText(text: string, sourceName: string, overrides: readonly string[] = []): Scenario {
  let document = parseScenarioText(text, sourceName);
  for (const o of overrides) document = applyOverride(document, parseOverride(o));
  return validateScenario(document);
}

export function loadScenarioFile(file: string, overrides: readonly string[] = []): Scenario {
  let text: string;
  try {
    text = readFileSync(file, 'utf8');
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    throw new ScenarioError('E_SCENARIO_FILE', '', `${file}: cannot read the scenario (${code ?? (error as Error).message})`);
  }
  return scenarioFromText(text, file, overrides);
}
