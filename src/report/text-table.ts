// Text tables for terminals and logs, in roundwire's own look. No colour and no box drawing, so
// that the output reads the same when piped.
//
// A table that fits the width limit prints as columns. Its header line starts with "# " (a
// script reading the table skips it like a comment) and every row with two spaces, so that the
// columns stay aligned under it; units stand in the header, in brackets, not beside each number:
//
//   # quantity          initial   measured  predicted
//     rate per round          -   0.796584   0.808335
//
// A table wider than the limit folds into one block per row: the first column names the block,
// then each other field on a line of its own, with dot leaders and the unit after the value:
//
//   variant name=fedlin fraction=0.1
//     stop ................ target-reached
//     payload to target ... 1691 kB
//
// A column whose cells are all numbers (or missing) is right-aligned, header included; any
// other column is left-aligned. Numbers print through formatNumber; a missing value is "-".

export type Cell = string | number | null;

/** A column: what it holds, and the unit of its numbers when they have one. */
export interface Column {
  name: string;
  unit?: string;
}

export const TEXT_TABLE_LIMITS = {
  /** characters a line may take before the table folds into blocks */
  widthMax: 100,
} as const;

const headerMark = '# ';
const rowIndent = '  ';
const columnGap = '  ';
const leaderDotsMin = 2;
const missing = '-';

/** Six significant digits, exponent form for very small and very large magnitudes. */
export function formatNumber(value: number | null): string {
  if (value === null || Number.isNaN(value)) return missing;
  if (!Number.isFinite(value)) return value > 0 ? 'inf' : '-inf';
  if (Number.isInteger(value) && Math.abs(value) < 1e9) return String(value);
  const magnitude = Math.abs(value);
  if (magnitude !== 0 && (magnitude < 1e-3 || magnitude >= 1e6)) return value.toExponential(4);
  return value.toPrecision(6).replace(/\.?0+$/, '');
}

/** The column's header text: "bytes to target [kB]", or the bare name when it has no unit. */
export function columnTitle(column: Column): string {
  return column.unit === undefined ? column.name : `${column.name} [${column.unit}]`;
}

function cellText(cell: Cell): string {
  return typeof cell === 'string' ? cell : formatNumber(cell);
}

function asColumn(column: Column | string): Column {
  return typeof column === 'string' ? { name: column } : column;
}

function columnar(columns: readonly Column[], rows: readonly Cell[][]): string[] {
  const header = columns.map(columnTitle);
  const body = rows.map((r) => columns.map((_, col) => cellText(r[col])));
  const widths = header.map((h, col) => Math.max(h.length, ...body.map((r) => r[col].length)));
  const numeric = columns.map((_, col) =>
    rows.every((r) => typeof r[col] === 'number' || r[col] === null),
  );
  const line = (prefix: string, cells: string[]): string =>
    prefix +
    cells
      .map((c, col) => (numeric[col] ? c.padStart(widths[col]) : c.padEnd(widths[col])))
      .join(columnGap)
      .trimEnd();
  return [line(headerMark, header), ...body.map((r) => line(rowIndent, r))];
}

function folded(columns: readonly Column[], rows: readonly Cell[][]): string[] {
  const [key, ...fields] = columns;
  const labelWidth = Math.max(0, ...fields.map((f) => f.name.length));
  const lines: string[] = [];
  for (const r of rows) {
    lines.push(`${key.name} ${cellText(r[0])}`.trimEnd());
    fields.forEach((f, i) => {
      const value = cellText(r[i + 1]);
      const unit = f.unit !== undefined && value !== missing ? ` ${f.unit}` : '';
      const dots = '.'.repeat(labelWidth - f.name.length + leaderDotsMin);
      lines.push(`${rowIndent}${f.name} ${dots} ${value}${unit}`);
    });
  }
  return lines;
}

/**
 * The table as text lines joined by "\n" (no final newline): as columns when every line fits
 * `widthMax` characters, folded into one block per row otherwise (a table of one column has
 * nothing to fold and stays as it is). A column given as a string is a name without a unit.
 * Rows hold one cell per column.
 */
export function formatTable(
  columns: readonly (Column | string)[],
  rows: readonly Cell[][],
  options: { widthMax?: number } = {},
): string {
  const widthMax = options.widthMax ?? TEXT_TABLE_LIMITS.widthMax;
  const spec = columns.map(asColumn);
  for (const [i, r] of rows.entries()) {
    if (r.length !== spec.length)
      throw new RangeError(`text table: row ${i} has ${r.length} cells for ${spec.length} columns`);
  }
  const lines = columnar(spec, rows);
  if (spec.length < 2 || lines.every((l) => l.length <= widthMax)) return lines.join('\n');
  return folded(spec, rows).join('\n');
}
