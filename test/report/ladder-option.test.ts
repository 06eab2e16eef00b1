// The --ladder grammar: field:rung/rung, fields joined by +, one rung's values by commas; values
// read as YAML 1.2 (the scenario file's language), separators inside flow collections or quotes
// kept. Bad grammar gets one line with the reason and the E_LADDER_SYNTAX code.
import { describe, expect, it } from 'vitest';
import { parseLadderOption, splitOutside } from '../../src/report/ladder-option.js';
import { ReportError } from '../../src/report/report-error.js';

function syntaxError(text: string): ReportError {
  try {
    parseLadderOption(text);
  } catch (error) {
    expect(error).toBeInstanceOf(ReportError);
    expect((error as ReportError).code).toBe('E_LADDER_SYNTAX');
    expect((error as ReportError).message).not.toContain('\n');
    return error as ReportError;
  }
  throw new Error(`expected ${text} to be refused`);
}

describe('parseLadderOption', () => {
  it('reads one field and its rungs as YAML values', () => {
    expect(parseLadderOption('method.name:fedavg/scaffold/fedlin')).toEqual({
      fields: ['method.name'],
      rungs: [['fedavg'], ['scaffold'], ['fedlin']],
    });
    expect(parseLadderOption('method.localSteps: 1 / 5 / 20')).toEqual({
      fields: ['method.localSteps'],
      rungs: [[1], [5], [20]],
    });
    expect(parseLadderOption('run.target:1e-8/0').rungs).toEqual([[1e-8], [0]]);
  });

  it('keeps flow collections and quoted text whole', () => {
    expect(parseLadderOption('method.localSteps:[1, 2]/{uniform: [1, 5]}').rungs).toEqual([
      [[1, 2]],
      [{ uniform: [1, 5] }],
    ]);
    expect(parseLadderOption("description:\"a/b\"/'c/d'/it's").rungs).toEqual([
      ['a/b'],
      ['c/d'],
      ["it's"],
    ]);
  });

  it('reads a zipped ladder: fields joined by +, one value per field in each rung', () => {
    expect(parseLadderOption('method.name+method.stepSize:fedavg,0.05/fedlin,0.2')).toEqual({
      fields: ['method.name', 'method.stepSize'],
      rungs: [
        ['fedavg', 0.05],
        ['fedlin', 0.2],
      ],
    });
    expect(
      parseLadderOption('method.name+method.localSteps:fedavg,[1, 2]/fedlin,{uniform: [1, 5]}')
        .rungs,
    ).toEqual([
      ['fedavg', [1, 2]],
      ['fedlin', { uniform: [1, 5] }],
    ]);
  });

  it('in a one-field ladder a comma belongs to the value', () => {
    expect(parseLadderOption('description:a, b/c').rungs).toEqual([['a, b'], ['c']]);
  });

  it('refuses bad grammar with the reason', () => {
    expect(syntaxError('method.name').message).toBe(
      '--ladder "method.name": no colon; expected field:rung/rung/..., e.g. method.name:fedavg/fedlin',
    );
    expect(syntaxError(':fedavg/fedlin').message).toMatch(/no field before the colon$/);
    expect(syntaxError('method.name:').message).toMatch(/no rungs after the colon$/);
    expect(syntaxError('method.name:  ').message).toMatch(/no rungs after the colon$/);
    expect(syntaxError('method.name:fedavg//fedlin').message).toMatch(/rung 2 is empty$/);
    expect(syntaxError('method.name:fedavg/').message).toMatch(/rung 2 is empty$/);
    expect(syntaxError('method name:a/b').message).toMatch(
      /field "method name": "method name" is not a valid key/,
    );
    expect(syntaxError('method.name++seed:a,1').message).toMatch(
      /an empty field name in method\.name\+\+seed$/,
    );
    expect(syntaxError('method.localSteps:[1, 2/3').message).toMatch(
      /an unclosed bracket or brace$/,
    );
    expect(syntaxError('method.localSteps:1]/3').message).toMatch(
      /a closing \] without its opening bracket$/,
    );
    expect(syntaxError('description:"a/b').message).toMatch(/an unclosed " quote$/);
  });

  it('refuses a zipped rung whose value count does not match the fields', () => {
    expect(syntaxError('method.name+method.stepSize:fedavg,0.05/fedlin').message).toBe(
      '--ladder "method.name+method.stepSize:fedavg,0.05/fedlin": rung 2 (fedlin) has 1 value for 2 fields; write one per field, separated by commas',
    );
    expect(syntaxError('method.name+method.stepSize:fedavg,0.05,3').message).toMatch(
      /rung 1 \(fedavg,0\.05,3\) has 3 values for 2 fields/,
    );
    expect(syntaxError('method.name+method.stepSize:fedavg,/fedlin,0.2').message).toMatch(
      /rung 1 \(fedavg,\): no value for method\.stepSize$/,
    );
  });

  it('refuses a value YAML cannot read', () => {
    expect(syntaxError('method.localSteps:{a: 1, a: 2}').message).toMatch(
      /rung 1: cannot read "\{a: 1, a: 2\}" as a value/,
    );
  });
});

describe('splitOutside', () => {
  it('splits only outside brackets, braces and quotes', () => {
    expect(splitOutside('[1,2],{a: 1, b: 2},"x,y",z', ',')).toEqual([
      '[1,2]',
      '{a: 1, b: 2}',
      '"x,y"',
      'z',
    ]);
    expect(splitOutside('"a\\"/b"/c', '/')).toEqual(['"a\\"/b"', 'c']);
  });
});
