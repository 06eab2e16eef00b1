// Turns a zod schema node into the words a user reads after "expected": zod's own messages
// speak of types ("expected number"), ours speak of the field ("a positive integer or
// {uniform: [min, max]}"). Reads zod 4's public definition objects (`_zod.def`).

import type { z } from 'zod';

type Node = z.ZodType;
interface Def {
  type: string;
  [key: string]: unknown;
}

function defOf(node: Node): Def {
  return (node as unknown as { _zod: { def: Def } })._zod.def;
}

/** Strips wrappers that do not change what a value must look like. */
export function unwrap(node: Node): Node {
  let current = node;
  for (;;) {
    const def = defOf(current);
    if (
      def.type === 'default' ||
      def.type === 'optional' ||
      def.type === 'nullable' ||
      def.type === 'prefault'
    ) {
      current = def.innerType as Node;
    } else if (def.type === 'pipe') {
      current = def.in as Node;
    } else {
      return current;
    }
  }
}

function describeNumber(def: Def): string {
  const checks = (
    (def.checks as { _zod: { def: Record<string, unknown> } }[] | undefined) ?? []
  ).map((c) => c._zod.def);
  const integer = checks.some(
    (c) => c.check === 'number_format' && String(c.format).includes('int'),
  );
  let lower: string | null = null;
  let upper: string | null = null;
  let positive = false;
  let nonNegative = false;
  for (const c of checks) {
    if (c.check === 'greater_than') {
      if (c.value === 0 && c.inclusive === false) positive = true;
      else if (c.value === 0 && c.inclusive === true) nonNegative = true;
      else lower = `${c.inclusive ? '>=' : '>'} ${String(c.value)}`;
    }
    if (c.check === 'less_than') upper = `${c.inclusive ? '<=' : '<'} ${String(c.value)}`;
  }
  const noun = integer ? 'integer' : 'number';
  const sign = positive ? 'positive ' : nonNegative ? 'non-negative ' : '';
  const bounds = [lower, upper].filter((b): b is string => b !== null).join(' and ');
  return `a ${sign}${noun}${bounds ? ` ${bounds}` : ''}`;
}

/** A short English description of the values a schema node accepts. */
export function describeSchema(node: Node, depth = 0): string {
  const def = defOf(unwrap(node));
  switch (def.type) {
    case 'number':
      return describeNumber(def);
    case 'string':
      return 'a string';
    case 'boolean':
      return 'true or false';
    case 'enum':
      return `one of ${Object.values(def.entries as Record<string, string>)
        .map((v) => JSON.stringify(v))
        .join(', ')}`;
    case 'literal':
      return (def.values as unknown[]).map((v) => JSON.stringify(v)).join(' or ');
    case 'array':
      return depth > 1
        ? 'a list'
        : `a list of ${describeSchema(def.element as Node, depth + 1).replace(/^an? /, '')}s`;
    case 'tuple': {
      // The only tuples in the schema are ranges; name their ends.
      const items = def.items as Node[];
      return items.length === 2
        ? '[min, max]'
        : `[${items.map((item) => defOf(unwrap(item)).type).join(', ')}]`;
    }
    case 'record':
      return 'a mapping';
    case 'object': {
      const keys = Object.keys(def.shape as Record<string, Node>);
      if (depth > 0 && keys.length === 1)
        return `{${keys[0]}: ${describeSchema((def.shape as Record<string, Node>)[keys[0]], depth + 1)}}`;
      return `a mapping with keys ${keys.join(', ')}`;
    }
    case 'union': {
      if (typeof def.discriminator === 'string') {
        const kinds = (def.options as Node[]).map((o) => {
          const shape = defOf(unwrap(o)).shape as Record<string, Node>;
          return JSON.stringify((defOf(shape[def.discriminator as string]).values as unknown[])[0]);
        });
        return `a mapping whose ${def.discriminator} is one of ${kinds.join(', ')}`;
      }
      const parts = (def.options as Node[]).map((o) => describeSchema(o, depth + 1));
      return parts.length > 1
        ? `${parts.slice(0, -1).join(', ')} or ${parts[parts.length - 1]}`
        : parts[0];
    }
    default:
      return def.type;
  }
}

/**
 * The schema node at a path, following the input to pick the branch of a discriminated union.
 * Returns null where the path leaves the schema (an unknown key).
 */
export function schemaAt(root: Node, path: readonly PropertyKey[], input: unknown): Node | null {
  let node: Node = root;
  let value: unknown = input;
  for (const key of path) {
    let def = defOf(unwrap(node));
    if (def.type === 'union') {
      const branch = pickBranch(def, value);
      if (!branch) return null;
      node = branch;
      def = defOf(unwrap(node));
    }
    if (def.type === 'object') {
      const shape = def.shape as Record<string, Node>;
      if (!(String(key) in shape)) return null;
      node = shape[String(key)];
    } else if (def.type === 'array') {
      node = def.element as Node;
    } else if (def.type === 'tuple') {
      node = (def.items as Node[])[Number(key)];
      if (!node) return null;
    } else if (def.type === 'record') {
      node = def.valueType as Node;
    } else {
      return null;
    }
    value =
      value !== null && typeof value === 'object'
        ? (value as Record<string, unknown>)[String(key)]
        : undefined;
  }
  return node;
}

function pickBranch(def: Def, value: unknown): Node | null {
  const options = def.options as Node[];
  const objects = options.filter((o) => defOf(unwrap(o)).type === 'object');
  if (typeof def.discriminator === 'string' && value !== null && typeof value === 'object') {
    const wanted = (value as Record<string, unknown>)[def.discriminator];
    for (const o of objects) {
      const field = (defOf(unwrap(o)).shape as Record<string, Node>)[def.discriminator];
      if ((defOf(field).values as unknown[]).includes(wanted)) return o;
    }
  }
  return objects[0] ?? null;
}
