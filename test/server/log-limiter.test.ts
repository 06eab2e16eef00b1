// One line per kind per interval; the lines held back are counted and the count is written
// with the next line of that kind, or by flush.

import { describe, expect, it } from 'vitest';
import { LogLimiter } from '../../server/log-limiter.js';

describe('LogLimiter', () => {
  it('writes the first line of a kind per interval and counts the rest', () => {
    const lines: string[] = [];
    let nowMs = 0;
    const limiter = new LogLimiter(
      (l) => lines.push(l),
      10,
      () => nowMs,
    );
    for (let i = 0; i < 1000; i++) {
      nowMs = i;
      limiter.line('frame errors', `frame error ${i}`);
      limiter.line('refused hellos', `refused ${i}`);
    }
    expect(lines).toEqual(['frame error 0', 'refused 0']);
    nowMs = 10_000;
    limiter.line('frame errors', 'frame error late');
    expect(lines.at(-1)).toBe(
      'frame error late (and 999 more frame errors since the last such line)',
    );
    limiter.flush();
    expect(lines.at(-1)).toBe('999 more refused hellos not logged');
    limiter.flush();
    expect(lines).toHaveLength(4);
  });

  it('refuses an interval that is not a positive number of seconds', () => {
    expect(
      () =>
        new LogLimiter(
          () => undefined,
          0,
          () => 0,
        ),
    ).toThrow(RangeError);
  });
});
