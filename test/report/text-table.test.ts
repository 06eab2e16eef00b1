// The text table's look: aligned columns under a "# " header with units in brackets, and one
// block per row with dot leaders once a line would pass the width limit (100 characters, the
// module's own contract; 80 and 100 columns are common practice for terminals and logs).
import { describe, expect, it } from 'vitest';
import {
  columnTitle,
  formatNumber,
  formatTable,
  TEXT_TABLE_LIMITS,
} from '../../src/report/text-table.js';

describe('formatTable as columns', () => {
  it('right-aligns number columns, header included, and left-aligns text columns', () => {
    const text = formatTable(
      ['method', 'rounds', 'note'],
      [
        ['fedlin', 43, 'reached'],
        ['gd', 1200, null],
        ['fedavg', null, 'floor'],
      ],
    );
    expect(text.split('\n')).toEqual([
      '# method  rounds  note',
      '  fedlin      43  reached',
      '  gd        1200  -',
      '  fedavg       -  floor',
    ]);
  });

  it('puts the unit in the header in brackets and nowhere in the rows', () => {
    expect(columnTitle({ name: 'bytes to target', unit: 'kB' })).toBe('bytes to target [kB]');
    expect(columnTitle({ name: 'rounds' })).toBe('rounds');
    const text = formatTable(
      [{ name: 'variant' }, { name: 'bytes to target', unit: 'kB' }],
      [['fedlin', 12.5]],
    );
    expect(text.split('\n')).toEqual([
      '# variant  bytes to target [kB]',
      '  fedlin                   12.5',
    ]);
  });

  it('formats numbers with formatNumber: six significant digits, exponents at the extremes', () => {
    const text = formatTable(
      ['x', 'value'],
      [
        ['small', 1.23456789e-7],
        ['plain', 0.5],
        ['large', 2.5e12],
        ['none', Number.NaN],
      ],
    );
    const values = text
      .split('\n')
      .slice(1)
      .map((l) => l.trim().split(/\s+/)[1]);
    expect(values).toEqual([formatNumber(1.23456789e-7), '0.5', formatNumber(2.5e12), '-']);
    expect(formatNumber(1.23456789e-7)).toBe('1.2346e-7');
    expect(formatNumber(2 / 3)).toBe('0.666667');
  });

  it('refuses a row whose cell count differs from the columns', () => {
    expect(() => formatTable(['a', 'b'], [['x']])).toThrow(/row 0 has 1 cells for 2 columns/);
  });
});

describe('formatTable folding', () => {
  const columns = [
    { name: 'variant' },
    { name: 'stop' },
    { name: 'to target', unit: 'rounds' },
    { name: 'payload to target', unit: 'kB' },
  ];
  // A row line is "  " + label + "  " + "target-reached" + "  " + "to target [rounds]" + "  " +
  // "payload to target [kB]", the numbers padded to their headers.
  const fixedWidth =
    2 +
    2 +
    'target-reached'.length +
    2 +
    'to target [rounds]'.length +
    2 +
    'payload to target [kB]'.length;
  /** The label that makes the widest columnar line exactly `width` characters long. */
  const labelFor = (width: number) => 'x'.repeat(width - fixedWidth);
  const tableOfWidth = (width: number) =>
    formatTable(columns, [
      [labelFor(width), 'target-reached', 43, 1376],
      ['short', 'diverged', null, null],
    ]);

  it('keeps columns at the limit and folds one character past it', () => {
    expect(TEXT_TABLE_LIMITS.widthMax).toBe(100);
    const atLimit = tableOfWidth(100).split('\n');
    expect(Math.max(...atLimit.map((l) => l.length))).toBe(100);
    expect(atLimit[0].startsWith('# variant')).toBe(true);
    const past = tableOfWidth(101).split('\n');
    expect(past[0]).toBe(`variant ${labelFor(101)}`);
    expect(past.every((l) => !l.startsWith('# '))).toBe(true);
  });

  it('folds into one block a row: dot leaders to one column, the unit after the value, none after a missing value', () => {
    const text = formatTable(
      columns,
      [
        ['fedlin/0.1', 'target-reached', 95, 1691],
        ['fedavg/1', 'rounds-complete', null, null],
      ],
      { widthMax: 40 },
    );
    expect(text.split('\n')).toEqual([
      'variant fedlin/0.1',
      `  stop ${'.'.repeat(15)} target-reached`,
      `  to target ${'.'.repeat(10)} 95 rounds`,
      '  payload to target .. 1691 kB',
      'variant fedavg/1',
      `  stop ${'.'.repeat(15)} rounds-complete`,
      `  to target ${'.'.repeat(10)} -`,
      '  payload to target .. -',
    ]);
  });
});
