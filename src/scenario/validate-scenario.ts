// Validation of a parsed scenario document against the schema, with messages that name the
// field's path, say what was expected and show what was given.

import type { z } from 'zod';
import { scenarioSchema, type Scenario } from './schema.js';
import { ScenarioError } from './scenario-error.js';
import { describeSchema, schemaAt, unwrap } from './describe-schema.js';

function valueAt(input: unknown, path: readonly PropertyKey[]): unknown {
  let value = input;
  for (const key of path) {
    if (value === null || typeof value !== 'object') return undefined;
    value = (value as Record<string, unknown>)[String(key)];
  }
  return value;
}

/** How a given value is shown in a message: short, and unambiguous about its type. */
export function showValue(value: unknown): string {
  if (value === undefined) return 'nothing';
  if (typeof value === 'string')
    return JSON.stringify(value.length > 40 ? `${value.slice(0, 40)}...` : value);
  if (Array.isArray(value))
    return value.length > 6 ? `a list of ${value.length} items` : JSON.stringify(value);
  if (value !== null && typeof value === 'object') return 'a mapping';
  return String(value);
}

function closestKey(unknownKey: string, known: string[]): string | null {
  const distance = (a: string, b: string): number => {
    const dp = Array.from({ length: a.length + 1 }, (_, i) => [
      i,
      ...Array<number>(b.length).fill(0),
    ]);
    for (let j = 1; j <= b.length; j++) dp[0][j] = j;
    for (let i = 1; i <= a.length; i++)
      for (let j = 1; j <= b.length; j++)
        dp[i][j] = Math.min(
          dp[i - 1][j] + 1,
          dp[i][j - 1] + 1,
          dp[i - 1][j - 1] + (a[i - 1].toLowerCase() === b[j - 1].toLowerCase() ? 0 : 1),
        );
    return dp[a.length][b.length];
  };
  let best: string | null = null;
  let bestDistance = Infinity;
  for (const k of known) {
    const d = distance(unknownKey, k);
    if (d < bestDistance) {
      bestDistance = d;
      best = k;
    }
  }
  return bestDistance <= Math.max(2, Math.floor(unknownKey.length / 3)) ? best : null;
}

function dotted(path: readonly PropertyKey[]): string {
  return path
    .map((p) => (typeof p === 'number' ? `[${p}]` : String(p)))
    .join('.')
    .replace(/\.\[/g, '[');
}

/** One readable line for one zod issue. */
export function formatIssue(
  issue: z.core.$ZodIssue,
  input: unknown,
): { fieldPath: string; message: string } {
  const given = valueAt(input, issue.path);
  if (issue.code === 'unrecognized_keys') {
    const node = schemaAt(scenarioSchema, issue.path, input);
    const def = node
      ? (
          unwrap(node) as unknown as {
            _zod: { def: { type: string; shape?: Record<string, unknown> } };
          }
        )._zod.def
      : null;
    const known = def?.type === 'object' && def.shape ? Object.keys(def.shape) : [];
    const key = issue.keys[0];
    const hint = closestKey(key, known);
    const fieldPath = dotted([...issue.path, key]);
    const message = `unknown key${hint ? ` (did you mean "${hint}"?)` : ''}; expected one of ${known.join(', ')}`;
    return { fieldPath, message };
  }
  const fieldPath = dotted(issue.path);
  if (issue.code === 'custom') return { fieldPath, message: issue.message };
  const node = schemaAt(scenarioSchema, issue.path, input);
  const expected = node ? describeSchema(node) : issue.message;
  if (given === undefined) return { fieldPath, message: `missing; expected ${expected}` };
  return { fieldPath, message: `expected ${expected}, got ${showValue(given)}` };
}

/** Parses a document into a complete scenario or throws a ScenarioError for the first problem. */
export function validateScenario(input: unknown): Scenario {
  const result = scenarioSchema.safeParse(input);
  if (result.success) return result.data;
  const lines = result.error.issues.map((issue) => formatIssue(issue, input));
  const first = lines[0];
  const more =
    lines.length > 1
      ? ` (and ${lines.length - 1} more problem${lines.length > 2 ? 's' : ''}: ${lines
          .slice(1, 4)
          .map((l) => l.fieldPath || '(top level)')
          .join(', ')})`
      : '';
  throw new ScenarioError('E_SCENARIO_FIELD', first.fieldPath, `${first.message}${more}`);
}
