// The pool of a worker's ups frame buffers (client/frame-buffers.ts): a buffer given back is
// taken again for a frame that fits it and needs at least half of it, the pool keeps at most
// two, and a frame always has exactly the length asked for.

import { describe, expect, it } from 'vitest';
import { FrameBuffers } from '../../client/frame-buffers.js';

describe('FrameBuffers', () => {
  it('gives a frame of the length asked, in a buffer given back before when it fits', () => {
    const pool = new FrameBuffers();
    const first = pool.take(1000);
    expect(first.byteLength).toBe(1000);
    expect(Buffer.isBuffer(first)).toBe(false);
    pool.give(first);
    const second = pool.take(900);
    expect(second.buffer).toBe(first.buffer);
    expect(second.byteLength).toBe(900);
    expect(pool.freeCount).toBe(0);
  });

  it('does not reuse a buffer more than twice the frame, nor one too small', () => {
    const pool = new FrameBuffers();
    const large = pool.take(10_000);
    pool.give(large);
    const small = pool.take(4_000);
    expect(small.buffer).not.toBe(large.buffer);
    const larger = pool.take(20_000);
    expect(larger.buffer).not.toBe(large.buffer);
    expect(pool.freeCount).toBe(1);
  });

  it('keeps at most two buffers', () => {
    const pool = new FrameBuffers();
    const frames = [pool.take(100), pool.take(100), pool.take(100)];
    for (const f of frames) pool.give(f);
    expect(pool.freeCount).toBe(2);
  });
});
