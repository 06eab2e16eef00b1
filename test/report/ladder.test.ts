// Ladders from either source become one shape; fields moved twice and rungs given twice are
// refused, since the later tweak would silently win or two variants would be the same run.
import { describe, expect, it } from 'vitest';
import {
  checkLadders,
  ladderOptionText,
  laddersFromScenario,
  rungText,
  valueText,
} from '../../src/report/ladder.js';
import { parseLadderOption } from '../../src/report/ladder-option.js';

describe('laddersFromScenario', () => {
  it('gives a one-field ladder one value a rung, and a zipped ladder its rungs as they are', () => {
    expect(
      laddersFromScenario([
        { field: 'method.name', rungs: ['fedavg', 'fedlin'] },
        { fields: ['a', 'b'], rungs: [[1, 2]] },
      ]),
    ).toEqual([
      { fields: ['method.name'], rungs: [['fedavg'], ['fedlin']] },
      { fields: ['a', 'b'], rungs: [[1, 2]] },
    ]);
    expect(laddersFromScenario(undefined)).toEqual([]);
  });

  it('gives the same ladder as the command line for the same text', () => {
    expect(
      laddersFromScenario([
        {
          fields: ['method.name', 'method.stepSize'],
          rungs: [
            ['fedavg', 0.05],
            ['fedlin', 0.2],
          ],
        },
      ]),
    ).toEqual([parseLadderOption('method.name+method.stepSize:fedavg,0.05/fedlin,0.2')]);
  });
});

describe('valueText, rungText and ladderOptionText', () => {
  it('show values in YAML flow style, quoting strings YAML would read as something else', () => {
    expect([
      valueText('fedavg'),
      valueText('1'),
      valueText(1),
      valueText(1e-8),
      valueText({ uniform: [1, 5] }),
      valueText('a\nb'),
    ]).toEqual(['fedavg', '"1"', '1', '1e-8', '{uniform: [1, 5]}', '"a\\nb"']);
    expect(rungText(['fedlin', 0.2])).toBe('fedlin, 0.2');
    expect(
      ladderOptionText(parseLadderOption('method.name+method.stepSize:fedavg,0.05/fedlin,0.2')),
    ).toBe('method.name+method.stepSize:fedavg,0.05/fedlin,0.2');
  });
});

describe('checkLadders', () => {
  const l = parseLadderOption;
  it('accepts distinct fields and distinct rungs', () => {
    expect(() =>
      checkLadders([l('method.name:fedavg/fedlin'), l('method.localSteps:1/5')]),
    ).not.toThrow();
  });

  it('refuses a field moved by two ladders, or twice by one', () => {
    expect(() =>
      checkLadders([l('method.name:fedavg/fedlin'), l('method.name+seed:gd,1/fedlin,2')]),
    ).toThrow('ladder method.name+seed: method.name is moved by ladder method.name too');
    expect(() => checkLadders([l('seed+seed:1,2')])).toThrow(
      'ladder seed+seed: seed is moved twice by this ladder',
    );
  });

  it('refuses a field and one of its own sub-fields', () => {
    expect(() =>
      checkLadders([
        l('compression.uplink.default:{kind: none}/{kind: top-k, fraction: 0.1}'),
        l('compression.uplink.default.fraction:1/0.5'),
      ]),
    ).toThrow(
      /compression\.uplink\.default\.fraction overlaps compression\.uplink\.default, which is moved by ladder compression\.uplink\.default too/,
    );
  });

  it('refuses a rung given twice, however it was written', () => {
    expect(() => checkLadders([l('method.name:fedavg/fedlin/"fedavg"')])).toThrow(
      'ladder method.name: rungs 1 and 3 are the same (fedavg)',
    );
    expect(() => checkLadders([l('method.stepSize:0.1/1e-1')])).toThrow(
      /rungs 1 and 2 are the same \(0\.1\)/,
    );
  });
});
