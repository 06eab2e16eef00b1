// A ladder: one scenario field, or several fields moved together, and the values (rungs) they
// take in a comparison. Ladders come from the scenario's `ladders` section or from `--ladder`
// options; both become this one shape, so that they behave the same from here on.

import { stringify } from 'yaml';
import { ladderLimits, type ScenarioLadder } from '../scenario/schema.js';
import type { Tweak } from '../scenario/tweaks.js';
import { ReportError } from './report-error.js';

export interface Ladder {
  /** dotted field paths; more than one for a zipped ladder */
  fields: string[];
  /** each rung holds one value per field, in the order of `fields` */
  rungs: unknown[][];
}

/** A value as labels and messages show it: YAML flow style, as it could be written back. */
export function valueText(value: unknown): string {
  if (typeof value === 'string' && /[\n\r]/.test(value)) return JSON.stringify(value);
  return stringify(value, {
    collectionStyle: 'flow',
    flowCollectionPadding: false,
    lineWidth: 0,
  }).trimEnd();
}

/** e.g. "method.name" or, for a zipped ladder, "method.name+method.stepSize" */
export function ladderName(ladder: Ladder): string {
  return ladder.fields.join('+');
}

/** e.g. "fedlin" or, for a zipped ladder, "fedlin, 0.2" */
export function rungText(rung: readonly unknown[]): string {
  return rung.map(valueText).join(', ');
}

/** The ladder as a `--ladder` option would write it. */
export function ladderOptionText(ladder: Ladder): string {
  return `${ladderName(ladder)}:${ladder.rungs.map((rung) => rung.map(valueText).join(',')).join('/')}`;
}

export function laddersFromScenario(entries: readonly ScenarioLadder[] | undefined): Ladder[] {
  return (entries ?? []).map((entry) =>
    entry.fields !== undefined
      ? { fields: entry.fields, rungs: entry.rungs as unknown[][] }
      : { fields: [entry.field as string], rungs: entry.rungs.map((value) => [value]) },
  );
}

function overlap(a: string, b: string): boolean {
  return a === b || a.startsWith(`${b}.`) || b.startsWith(`${a}.`);
}

/**
 * Refuses a field moved by two ladders (or a field and one of its own sub-fields, where the later
 * would silently win) and a rung given twice (two variants would be the same run).
 */
export function checkLadders(ladders: readonly Ladder[]): void {
  if (ladders.length > ladderLimits.laddersMax)
    throw new ReportError(
      'E_LADDER_FIELDS',
      `${ladders.length} ladders; at most ${ladderLimits.laddersMax} may form one comparison`,
    );
  const moved: { field: string; ladder: Ladder }[] = [];
  for (const ladder of ladders) {
    const name = ladderName(ladder);
    for (const field of ladder.fields) {
      const other = moved.find((m) => overlap(m.field, field));
      if (other !== undefined) {
        const what =
          other.field === field
            ? `${field} is moved`
            : `${field} overlaps ${other.field}, which is moved`;
        const where =
          other.ladder === ladder
            ? 'twice by this ladder'
            : `by ladder ${ladderName(other.ladder)} too`;
        throw new ReportError('E_LADDER_FIELDS', `ladder ${name}: ${what} ${where}`);
      }
      moved.push({ field, ladder });
    }
    if (ladder.rungs.length > ladderLimits.rungsMax)
      throw new ReportError(
        'E_LADDER_RUNG',
        `ladder ${name}: ${ladder.rungs.length} rungs; at most ${ladderLimits.rungsMax}`,
      );
    const texts = ladder.rungs.map(rungText);
    texts.forEach((text, i) => {
      const first = texts.indexOf(text);
      if (first !== i)
        throw new ReportError(
          'E_LADDER_RUNG',
          `ladder ${name}: rungs ${first + 1} and ${i + 1} are the same (${text})`,
        );
    });
  }
}

/** The tweaks that put every field of the ladder on one rung (0-based). */
export function rungTweaks(ladder: Ladder, rungIndex: number): Tweak[] {
  return ladder.fields.map((field, i) => ({
    path: field.split('.'),
    value: ladder.rungs[rungIndex][i],
  }));
}
