// Tweaks: one scenario field set to one value, applied to the document before validation so that
// a tweak is checked exactly like the file it changes. On the command line a tweak is
// `--tweak field:value`; the first colon ends the field, and the value is read as YAML, as the
// scenario file is: `5`, `1e-3`, `true`, `fedlin`, `[1, 2]`, `{uniform: [1, 20]}`.

import { parse } from 'yaml';
import { ScenarioError } from './scenario-error.js';

const keyPattern = /^[A-Za-z_][A-Za-z0-9_-]*$/;

export interface Tweak {
  path: string[];
  value: unknown;
  /** the command-line text it was read from, named when the value fails validation */
  text?: string;
}

/** The keys of a dotted field path, or the reason it is not one. */
export function fieldPathKeys(text: string): string[] | string {
  if (text === '') return 'no field before the colon';
  const keys = text.split('.');
  const bad = keys.find((key) => !keyPattern.test(key));
  return bad === undefined
    ? keys
    : `${JSON.stringify(bad)} is not a valid key (letters, digits, _ and -, not starting with a digit)`;
}

/** Reads a value written on the command line as YAML; returns the value or the parser's reason. */
export function readYamlValue(text: string): { value: unknown } | { reason: string } {
  try {
    return { value: parse(text) as unknown };
  } catch (error) {
    return { reason: (error as Error).message.split('\n')[0] };
  }
}

/** Reads `--tweak field:value`. */
export function parseTweak(text: string): Tweak {
  const colon = text.indexOf(':');
  if (colon < 0)
    throw new ScenarioError(
      'E_SCENARIO_TWEAK',
      '',
      `--tweak ${JSON.stringify(text)}: no colon; expected field:value, e.g. method.localSteps:10`,
    );
  const pathText = text.slice(0, colon).trim();
  const keys = fieldPathKeys(pathText);
  if (typeof keys === 'string')
    throw new ScenarioError(
      'E_SCENARIO_TWEAK',
      pathText,
      `--tweak ${JSON.stringify(text)}: ${keys}`,
    );
  const valueText = text.slice(colon + 1);
  if (valueText.trim() === '')
    throw new ScenarioError(
      'E_SCENARIO_TWEAK',
      pathText,
      `--tweak ${JSON.stringify(text)}: no value after the colon`,
    );
  const read = readYamlValue(valueText);
  if ('reason' in read)
    throw new ScenarioError(
      'E_SCENARIO_TWEAK',
      pathText,
      `--tweak ${JSON.stringify(text)}: cannot read the value: ${read.reason}`,
    );
  return { path: keys, value: read.value, text };
}

/** Returns a copy of the document with the tweak applied; intermediate mappings are created. */
export function applyTweak(document: unknown, tweak: Tweak): Record<string, unknown> {
  const root = structuredClone(document) as Record<string, unknown>;
  let node: Record<string, unknown> = root;
  tweak.path.slice(0, -1).forEach((key, i) => {
    const next = node[key];
    if (next === undefined) node[key] = {};
    else if (next === null || typeof next !== 'object' || Array.isArray(next)) {
      throw new ScenarioError(
        'E_SCENARIO_TWEAK',
        tweak.path.slice(0, i + 1).join('.'),
        `not a mapping, so it has no field ${JSON.stringify(tweak.path[i + 1])} to tweak`,
      );
    }
    node = node[key] as Record<string, unknown>;
  });
  node[tweak.path[tweak.path.length - 1]] = tweak.value;
  return root;
}
