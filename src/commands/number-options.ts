// Parsers for the command line's numbers, handed to commander (Option.argParser) so that a
// number is read once, where it enters, and a bad one stops the command with exit code 2 and
// one line naming the option, the accepted range and the value given.

/**
 * A number option's value out of range or not a number. Thrown through commander (which passes
 * on what is not its own InvalidArgumentError) to the CLI, which prints it as bad input.
 */
export class OptionValueError extends Error {
  readonly code = 'E_OPTION_VALUE';
}

/** A whole number from `min` to `max`, written in decimal digits. */
export function integerInRange(option: string, min: number, max: number): (text: string) => number {
  return (text) => {
    const value = Number(text);
    if (!/^\d+$/.test(text.trim()) || value < min || value > max) {
      throw new OptionValueError(
        `${option}: expected an integer from ${min} to ${max}, got "${text}"`,
      );
    }
    return value;
  };
}

/** Seconds from `min` to `max`, fractions allowed; `minExclusive` leaves `min` itself out. */
export function secondsInRange(
  option: string,
  min: number,
  max: number,
  minExclusive = false,
): (text: string) => number {
  return (text) => {
    const value = Number(text);
    const aboveMin = minExclusive ? value > min : value >= min;
    if (text.trim() === '' || !aboveMin || !(value <= max)) {
      const range = minExclusive ? `more than ${min}, at most ${max}` : `from ${min} to ${max}`;
      throw new OptionValueError(`${option}: expected seconds ${range}, got "${text}"`);
    }
    return value;
  };
}

/** A number from `min` to `max`, fractions allowed, e.g. a confidence level. */
export function numberInRange(option: string, min: number, max: number): (text: string) => number {
  return (text) => {
    const value = Number(text);
    if (text.trim() === '' || !(value >= min && value <= max)) {
      throw new OptionValueError(
        `${option}: expected a number from ${min} to ${max}, got "${text}"`,
      );
    }
    return value;
  };
}
