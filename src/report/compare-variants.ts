// The variants of a comparison: the product of the ladders (a zipped ladder is one factor), each
// variant a list of tweaks, so that the scenario validation checks it exactly as it checks a file.

import type { Tweak } from '../scenario/tweaks.js';
import { rungTweaks, valueText, type Ladder } from './ladder.js';
import { ReportError } from './report-error.js';

export const COMPARE_LIMITS = {
  /** variants one comparison may run */
  variantsMax: 64,
  /** characters of a variant's folder name */
  folderNameMax: 80,
} as const;

export interface Variant {
  /** 0-based position in the product (first ladder slowest) */
  index: number;
  /** e.g. "name:fedlin fraction:0.1": each field by its last key where that is unambiguous */
  label: string;
  /** the folder under the comparison's output folder, e.g. "04-fedlin-0.1" */
  folderName: string;
  /** the rung (0-based) taken from each ladder, in ladder order */
  rungs: number[];
  /** the tweaks that make this variant, in ladder order */
  tweaks: Tweak[];
}

/** Each field named by its last key, or by its whole path where two last keys agree. */
function shortNames(fields: readonly string[]): string[] {
  const last = fields.map((f) => f.slice(f.lastIndexOf('.') + 1));
  return fields.map((f, i) => (last.filter((n) => n === last[i]).length > 1 ? f : last[i]));
}

function folderNameOf(index: number, values: readonly string[]): string {
  const tail = values.map((v) => v.replace(/[^A-Za-z0-9_.-]+/g, '_')).join('-');
  return `${String(index + 1).padStart(2, '0')}-${tail}`.slice(0, COMPARE_LIMITS.folderNameMax);
}

/** How many variants the ladders make. */
export function variantCount(ladders: readonly Ladder[]): number {
  return ladders.reduce((n, l) => n * l.rungs.length, 1);
}

/** Every combination of one rung from each ladder, the first ladder varying slowest; bounded by variantsMax. */
export function expandVariants(ladders: readonly Ladder[]): Variant[] {
  if (ladders.length === 0)
    throw new ReportError(
      'E_COMPARE_VARIANTS',
      'nothing to compare: give --ladder field:rung/rung or a ladders section in the scenario',
    );
  const total = variantCount(ladders);
  if (total > COMPARE_LIMITS.variantsMax) {
    throw new ReportError(
      'E_COMPARE_VARIANTS',
      `${total} variants (${ladders.map((l) => l.rungs.length).join(' x ')} rungs) exceed the limit of ${COMPARE_LIMITS.variantsMax}; use fewer rungs`,
    );
  }
  const names = shortNames(ladders.flatMap((l) => l.fields));
  const variants: Variant[] = [];
  for (let index = 0; index < total; index++) {
    let rest = index;
    const rungs = new Array<number>(ladders.length);
    for (let l = ladders.length - 1; l >= 0; l--) {
      rungs[l] = rest % ladders[l].rungs.length;
      rest = Math.floor(rest / ladders[l].rungs.length);
    }
    const values = ladders.flatMap((l, i) => l.rungs[rungs[i]].map(valueText));
    variants.push({
      index,
      label: names.map((n, i) => `${n}:${values[i]}`).join(' '),
      folderName: folderNameOf(index, values),
      rungs,
      tweaks: ladders.flatMap((l, i) => rungTweaks(l, rungs[i])),
    });
  }
  return variants;
}
