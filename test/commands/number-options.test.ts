// The command line's number parsers: the value comes back as a number, or an OptionValueError
// names the option, the accepted range and the value given. Ranges are the options' own
// (src/cli.ts); the values tried sit on and just past each bound (common practice).

import { describe, expect, it } from 'vitest';
import {
  integerInRange,
  OptionValueError,
  secondsInRange,
} from '../../src/commands/number-options.js';

function refusal(parse: (text: string) => number, text: string): OptionValueError {
  try {
    parse(text);
  } catch (error) {
    if (error instanceof OptionValueError) return error;
    throw error;
  }
  throw new Error(`"${text}" was accepted`);
}

describe('integerInRange', () => {
  const capacity = integerInRange('--capacity', 1, 10_000);

  it('reads whole numbers within the range, bounds included', () => {
    expect(capacity('1')).toBe(1);
    expect(capacity('10000')).toBe(10_000);
  });

  it('refuses fractions, words, signs, blanks and values past either bound, naming the option', () => {
    for (const bad of ['0', '10001', '2.5', 'four', '-3', '', ' ', '1e3', '0x10']) {
      const error = refusal(capacity, bad);
      expect(error.code).toBe('E_OPTION_VALUE');
      expect(error.message).toBe(`--capacity: expected an integer from 1 to 10000, got "${bad}"`);
    }
  });
});

describe('secondsInRange', () => {
  it('reads seconds with fractions, bounds included', () => {
    const grace = secondsInRange('--resume-grace-seconds', 0, 3600);
    expect(grace('0')).toBe(0);
    expect(grace('2.5')).toBe(2.5);
    expect(grace('3600')).toBe(3600);
  });

  it('refuses blanks, words, NaN and values past either bound, naming the option', () => {
    const silence = secondsInRange('--heartbeat-silence-seconds', 1, 3600);
    for (const bad of ['', 'soon', 'NaN', '0.5', '3601', 'Infinity']) {
      expect(refusal(silence, bad).message).toBe(
        `--heartbeat-silence-seconds: expected seconds from 1 to 3600, got "${bad}"`,
      );
    }
  });

  it('leaves out an exclusive lower bound', () => {
    const wait = secondsInRange('--workers-wait-seconds', 0, 604_800, true);
    expect(wait('0.25')).toBe(0.25);
    expect(refusal(wait, '0').message).toBe(
      '--workers-wait-seconds: expected seconds more than 0, at most 604800, got "0"',
    );
  });
});
