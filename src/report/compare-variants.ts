// The variants of a comparison: --vary axes (or the scenario's sweep field) and their cartesian
// product, each variant a list of --set overrides so that the scenario validation checks it
// exactly as it checks a file.

import type { Scenario } from '../scenario/schema.js';
import { parseOverride } from '../scenario/overrides.js';
import { ScenarioError } from '../scenario/scenario-error.js';
import { ReportError } from './report-error.js';

export const COMPARE_LIMITS = {
  /** variants one comparison may run */
  variantsMax: 64,
  /** characters of a variant's folder name */
  folderNameMax: 80,
} as const;

export interface VaryAxis {
  path: string;
  /** each value as --set reads it (YAML scalar or flow collection) */
  values: string[];
}

export interface Variant {
  /** 0-based position in the product (first axis slowest) */
  index: number;
  /** e.g. "name=fedlin fraction=0.1": each axis by its last path segment when that is unambiguous */
  label: string;
  /** --set overrides, in axis order */
  overrides: string[];
  /** the folder under the comparison's output folder */
  folderName: string;
}

/** Splits at commas that are outside brackets, braces and quotes, so `[1, 2],[3]` is two values. */
function splitTopLevel(text: string): string[] {
  const parts: string[] = [];
  let depth = 0;
  let quote: string | null = null;
  let start = 0;
  for (let i = 0; i < text.length; i++) {
    const c = text[i];
    if (quote !== null) {
      if (c === quote) quote = null;
    } else if (c === '"' || c === "'") quote = c;
    else if (c === '[' || c === '{') depth++;
    else if (c === ']' || c === '}') depth--;
    else if (c === ',' && depth === 0) {
      parts.push(text.slice(start, i));
      start = i + 1;
    }
  }
  parts.push(text.slice(start));
  return parts.map((p) => p.trim());
}

/** Reads `--vary path=v1,v2,...`; the path and every value are checked as --set checks them. */
export function parseVary(text: string): VaryAxis {
  const eq = text.indexOf('=');
  if (eq <= 0) throw new ReportError('E_COMPARE_VARY', `--vary ${JSON.stringify(text)}: expected path=value,value,..., e.g. method.name=fedavg,fedlin`);
  const path = text.slice(0, eq).trim();
  const valuesText = text.slice(eq + 1);
  if (valuesText.trim() === '') throw new ScenarioError('E_SCENARIO_OVERRIDE', path, '--vary: no values given; expected path=value,value,...');
  const values = splitTopLevel(valuesText);
  if (values.some((v) => v === '')) throw new ScenarioError('E_SCENARIO_OVERRIDE', path, `--vary: an empty value in ${JSON.stringify(valuesText)}`);
  for (const v of values) parseOverride(`${path}=${v}`);
  return { path, values };
}

/** A sweep value as --set text: bare when YAML reads it back as the same value, else quoted. */
function valueText(path: string, value: string | number | boolean): string {
  const bare = String(value);
  return parseOverride(`${path}=${bare}`).value === value ? bare : JSON.stringify(value);
}

/** The scenario's own sweep field as axes. */
export function sweepAxes(scenario: Scenario): VaryAxis[] {
  return Object.entries(scenario.sweep ?? {}).map(([path, values]) => ({ path, values: values.map((v) => valueText(path, v)) }));
}

/** Each axis named by its last path segment, or by its whole path where two last segments agree. */
function axisNames(axes: readonly VaryAxis[]): string[] {
  const last = axes.map((a) => a.path.slice(a.path.lastIndexOf('.') + 1));
  return axes.map((a, i) => (last.filter((n) => n === last[i]).length > 1 ? a.path : last[i]));
}

function folderNameOf(index: number, values: readonly string[]): string {
  const tail = values.map((v) => v.replace(/[^A-Za-z0-9_.-]+/g, '_')).join('-');
  return `${String(index + 1).padStart(2, '0')}-${tail}`.slice(0, COMPARE_LIMITS.folderNameMax);
}

/** Every combination of the axes' values, the first axis varying slowest; bounded by variantsMax. */
export function expandVariants(axes: readonly VaryAxis[]): Variant[] {
  if (axes.length === 0) throw new ReportError('E_COMPARE_VARIANTS', 'nothing to compare: give --vary path=v1,v2 or a sweep field in the scenario');
  const seen = new Set<string>();
  for (const a of axes) {
    if (seen.has(a.path)) throw new ReportError('E_COMPARE_VARY', `--vary ${a.path}: the same field is varied twice`);
    seen.add(a.path);
  }
  const total = axes.reduce((n, a) => n * a.values.length, 1);
  if (total > COMPARE_LIMITS.variantsMax) {
    throw new ReportError('E_COMPARE_VARIANTS', `${total} variants (${axes.map((a) => a.values.length).join(' x ')}) exceed the limit of ${COMPARE_LIMITS.variantsMax}; vary fewer values`);
  }
  const names = axisNames(axes);
  const variants: Variant[] = [];
  for (let index = 0; index < total; index++) {
    let rest = index;
    const picks: string[] = new Array<string>(axes.length);
    for (let a = axes.length - 1; a >= 0; a--) {
      picks[a] = axes[a].values[rest % axes[a].values.length];
      rest = Math.floor(rest / axes[a].values.length);
    }
    const overrides = axes.map((a, i) => `${a.path}=${picks[i]}`);
    const label = names.map((n, i) => `${n}=${picks[i]}`).join(' ');
    variants.push({ index, label, overrides, folderName: folderNameOf(index, picks) });
  }
  return variants;
}
