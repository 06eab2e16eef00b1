// A token bucket: up to `burst` tokens, refilled at `perSecond`; a take succeeds while a token
// is left. Time is passed in (milliseconds of a monotonic clock), so the arithmetic is plain and
// a test can drive it.

export class TokenBucket {
  private readonly perSecond: number;
  private readonly burst: number;
  private tokens: number;
  private updatedMs: number;

  constructor(perSecond: number, burst: number, nowMs: number) {
    if (!(perSecond >= 0) || !Number.isFinite(perSecond))
      throw new RangeError(`perSecond: a finite rate of at least 0 expected, got ${perSecond}`);
    if (!Number.isSafeInteger(burst) || burst < 1)
      throw new RangeError(`burst: a positive integer expected, got ${burst}`);
    this.perSecond = perSecond;
    this.burst = burst;
    this.tokens = burst;
    this.updatedMs = nowMs;
  }

  private refill(nowMs: number): void {
    // A clock that steps back (it should not) refills nothing rather than draining the bucket.
    const elapsedSeconds = Math.max(0, nowMs - this.updatedMs) / 1000;
    this.tokens = Math.min(this.burst, this.tokens + elapsedSeconds * this.perSecond);
    this.updatedMs = Math.max(this.updatedMs, nowMs);
  }

  /** Takes one token if one is left; false when the bucket is empty. */
  take(nowMs: number): boolean {
    this.refill(nowMs);
    if (this.tokens < 1) return false;
    this.tokens -= 1;
    return true;
  }

  /** Whole tokens left now. */
  available(nowMs: number): number {
    this.refill(nowMs);
    return Math.floor(this.tokens);
  }
}
