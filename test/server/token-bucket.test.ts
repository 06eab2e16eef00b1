// The token bucket's arithmetic: a full bucket at the start, `burst` takes at once, then one
// take per 1/rate seconds, never more than `burst` saved up (the classic token bucket, as
// RFC 2697 section 3 meters a committed burst).

import { describe, expect, it } from 'vitest';
import { TokenBucket } from '../../server/token-bucket.js';

describe('TokenBucket', () => {
  it('allows the burst at once, then refuses until a token refills', () => {
    const bucket = new TokenBucket(10, 5, 0);
    for (let i = 0; i < 5; i++) expect(bucket.take(0)).toBe(true);
    expect(bucket.take(0)).toBe(false);
    // 10 a second: one token after 100 ms, not before.
    expect(bucket.take(99)).toBe(false);
    expect(bucket.take(100)).toBe(true);
    expect(bucket.take(100)).toBe(false);
  });

  it('sustains the rate over a long run', () => {
    const bucket = new TokenBucket(10, 5, 0);
    let taken = 0;
    // A take every millisecond for 60 s: the burst plus 10 a second.
    for (let ms = 0; ms <= 60_000; ms++) if (bucket.take(ms)) taken++;
    expect(taken).toBe(5 + 600);
  });

  it('saves up no more than the burst', () => {
    const bucket = new TokenBucket(10, 5, 0);
    expect(bucket.available(3_600_000)).toBe(5);
  });

  it('refills nothing when the clock steps back', () => {
    const bucket = new TokenBucket(10, 1, 1000);
    expect(bucket.take(1000)).toBe(true);
    expect(bucket.take(500)).toBe(false);
    expect(bucket.take(1099)).toBe(false);
    expect(bucket.take(1100)).toBe(true);
  });

  it('refuses a rate or burst that is not a limit', () => {
    expect(() => new TokenBucket(Number.NaN, 5, 0)).toThrow(RangeError);
    expect(() => new TokenBucket(-1, 5, 0)).toThrow(RangeError);
    expect(() => new TokenBucket(1, 0, 0)).toThrow(RangeError);
    expect(() => new TokenBucket(1, 2.5, 0)).toThrow(RangeError);
  });
});
