// Plain aligned text tables for terminals and logs: no colour, no box drawing, so that the
// output reads the same when piped.

export type Cell = string | number | null;

export function formatNumber(value: number | null): string {
  if (value === null || Number.isNaN(value)) return '-';
  if (!Number.isFinite(value)) return value > 0 ? 'inf' : '-inf';
  if (Number.isInteger(value) && Math.abs(value) < 1e9) return String(value);
  const magnitude = Math.abs(value);
  if (magnitude !== 0 && (magnitude < 1e-3 || magnitude >= 1e6)) return value.toExponential(4);
  return value.toPrecision(6).replace(/\.?0+$/, '');
}

export function formatTable(header: string[], rows: Cell[][]): string {
  const text = [header, ...rows.map((r) => r.map((c) => (typeof c === 'number' || c === null ? formatNumber(c) : c)))];
  const widths = header.map((_, col) => Math.max(...text.map((r) => r[col].length)));
  const numeric = header.map((_, col) => rows.every((r) => typeof r[col] === 'number' || r[col] === null));
  const line = (r: string[]): string =>
    r.map((c, col) => (numeric[col] ? c.padStart(widths[col]) : c.padEnd(widths[col]))).join('  ').trimEnd();
  return [line(text[0]), widths.map((w) => '-'.repeat(w)).join('  '), ...text.slice(1).map(line)].join('\n');
}
