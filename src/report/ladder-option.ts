// The command-line form of a ladder:
//
//   --ladder method.name:fedavg/fedlin
//   --ladder method.name+method.stepSize:fedavg,0.05/fedlin,0.2
//
// The first colon ends the field (or the fields, joined by +); slashes separate the rungs; in a
// zipped ladder, commas separate one rung's values, one per field. Every value is read as YAML,
// as the scenario file is, so flow collections work too: `method.localSteps:[1, 2]/{uniform: [1, 5]}`.
// Separators inside brackets, braces or quotes do not count: `"a/b"` is one value.

import { ladderLimits } from '../scenario/schema.js';
import { fieldPathKeys, readYamlValue } from '../scenario/tweaks.js';
import type { Ladder } from './ladder.js';
import { ReportError } from './report-error.js';

/** The grammar as `roundwire compare --help` shows it. */
export const ladderOptionHelp = `
Ladders:
  A ladder moves one field through its rungs; several ladders run as their product.
    --ladder method.name:fedavg/fedlin                  2 variants
    --ladder method.localSteps:1/5/20 --ladder method.name:fedavg/fedlin
                                                        3 x 2 = 6 variants
  A zipped ladder moves several fields together, rung by rung (not their product):
    --ladder method.name+method.stepSize:fedavg,0.05/fedlin,0.2
                                                        2 variants
  The first colon ends the field (fields joined by +); a slash separates rungs; in a zipped
  ladder a comma separates one rung's values, one per field. Values are read as YAML, like the
  scenario file; a slash or comma inside brackets, braces or quotes stays part of the value:
    --ladder 'method.localSteps:[1, 2]/{uniform: [1, 5]}'
  In the scenario file the same ladders read:
    ladders:
      - {field: method.localSteps, rungs: [1, 5, 20]}
      - {fields: [method.name, method.stepSize], rungs: [[fedavg, 0.05], [fedlin, 0.2]]}
  --ladder options replace the scenario's ladders.`;

/** As in YAML, a quote opens a quoted value only where a value starts (so `it's` is plain text). */
function startsValue(text: string, at: number, separator: string): boolean {
  const before = text.slice(0, at).trimEnd();
  return before === '' || [separator, '[', '{', ',', ':'].includes(before[before.length - 1]);
}

/** Splits at a separator outside brackets, braces and quotes; or says why the text is unbalanced. */
export function splitOutside(text: string, separator: string): string[] | string {
  const parts: string[] = [];
  let depth = 0;
  let quote: string | null = null;
  let start = 0;
  for (let i = 0; i < text.length; i++) {
    const c = text[i];
    if (quote !== null) {
      if (c === '\\' && quote === '"') i++;
      else if (c === quote) quote = null;
    } else if ((c === '"' || c === "'") && startsValue(text, i, separator)) quote = c;
    else if (c === '[' || c === '{') depth++;
    else if (c === ']' || c === '}') {
      if (--depth < 0) return `a closing ${c} without its opening bracket`;
    } else if (c === separator && depth === 0) {
      parts.push(text.slice(start, i));
      start = i + 1;
    }
  }
  if (quote !== null) return `an unclosed ${quote} quote`;
  if (depth > 0) return 'an unclosed bracket or brace';
  parts.push(text.slice(start));
  return parts.map((p) => p.trim());
}

function rungValues(
  rungText: string,
  rungNumber: number,
  fields: readonly string[],
): unknown[] | string {
  const texts = fields.length === 1 ? [rungText] : splitOutside(rungText, ',');
  if (typeof texts === 'string') return `rung ${rungNumber} (${rungText}): ${texts}`;
  if (texts.length !== fields.length) {
    return `rung ${rungNumber} (${rungText}) has ${texts.length} value${texts.length === 1 ? '' : 's'} for ${fields.length} fields; write one per field, separated by commas`;
  }
  const values: unknown[] = [];
  for (const [i, text] of texts.entries()) {
    if (text === '') return `rung ${rungNumber} (${rungText}): no value for ${fields[i]}`;
    const read = readYamlValue(text);
    if ('reason' in read)
      return `rung ${rungNumber}: cannot read ${JSON.stringify(text)} as a value: ${read.reason}`;
    values.push(read.value);
  }
  return values;
}

function readLadderOption(text: string): Ladder | string {
  const colon = text.indexOf(':');
  if (colon < 0) return 'no colon; expected field:rung/rung/..., e.g. method.name:fedavg/fedlin';
  const fields = text
    .slice(0, colon)
    .split('+')
    .map((f) => f.trim());
  if (fields.length > ladderLimits.fieldsMax)
    return `${fields.length} fields; at most ${ladderLimits.fieldsMax} move together`;
  for (const field of fields) {
    if (field === '')
      return fields.length === 1
        ? 'no field before the colon'
        : `an empty field name in ${text.slice(0, colon)}`;
    const keys = fieldPathKeys(field);
    if (typeof keys === 'string') return `field ${JSON.stringify(field)}: ${keys}`;
  }
  const rungsText = text.slice(colon + 1);
  if (rungsText.trim() === '') return 'no rungs after the colon';
  const rungTexts = splitOutside(rungsText, '/');
  if (typeof rungTexts === 'string') return rungTexts;
  if (rungTexts.length > ladderLimits.rungsMax)
    return `${rungTexts.length} rungs; at most ${ladderLimits.rungsMax}`;
  const rungs: unknown[][] = [];
  for (const [i, rungText] of rungTexts.entries()) {
    if (rungText === '') return `rung ${i + 1} is empty`;
    const values = rungValues(rungText, i + 1, fields);
    if (typeof values === 'string') return values;
    rungs.push(values);
  }
  return { fields, rungs };
}

/** Reads one `--ladder` option; bad grammar gets one line naming the reason. */
export function parseLadderOption(text: string): Ladder {
  const ladder = readLadderOption(text);
  if (typeof ladder === 'string')
    throw new ReportError('E_LADDER_SYNTAX', `--ladder ${JSON.stringify(text)}: ${ladder}`);
  return ladder;
}
