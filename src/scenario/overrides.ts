// `--set path=value` overrides, applied to the document before validation so that an override
// is checked exactly like the file it changes. Values are read as YAML scalars or flow
// collections: `5`, `1e-3`, `true`, `fedlin`, `[1, 2]`, `{uniform: [1, 20]}`.

import { parse } from 'yaml';
import { ScenarioError } from './scenario-error.js';

const pathSegment = /^[A-Za-z_][A-Za-z0-9_-]*$/;

export interface Override {
  path: string[];
  value: unknown;
}

export function parseOverride(text: string): Override {
  const eq = text.indexOf('=');
  if (eq <= 0) throw new ScenarioError('E_SCENARIO_OVERRIDE', '', `--set ${JSON.stringify(text)}: expected path=value, e.g. method.localSteps=10`);
  const pathText = text.slice(0, eq).trim();
  const path = pathText.split('.');
  const bad = path.find((segment) => !pathSegment.test(segment));
  if (bad !== undefined) throw new ScenarioError('E_SCENARIO_OVERRIDE', pathText, `--set: ${JSON.stringify(bad)} is not a valid key`);
  let value: unknown;
  try {
    value = parse(text.slice(eq + 1)) as unknown;
  } catch (error) {
    throw new ScenarioError('E_SCENARIO_OVERRIDE', pathText, `--set: cannot read the value: ${(error as Error).message.split('\n')[0]}`);
  }
  return { path, value };
}

/** Returns a copy of the document with the override applied; intermediate mappings are created. */
export function applyOverride(document: unknown, override: Override): Record<string, unknown> {
  const root = structuredClone(document) as Record<string, unknown>;
  let node: Record<string, unknown> = root;
  override.path.slice(0, -1).forEach((key, i) => {
    const next = node[key];
    if (next === undefined) node[key] = {};
    else if (next === null || typeof next !== 'object' || Array.isArray(next)) {
      throw new ScenarioError('E_SCENARIO_OVERRIDE', override.path.slice(0, i + 1).join('.'), '--set: this field is not a mapping, so it has no sub-fields');
    }
    node = node[key] as Record<string, unknown>;
  });
  node[override.path[override.path.length - 1]] = override.value;
  return root;
}
