// Buffers for a worker's ups frames, used again from one exchange to the next. A frame of 500
// clients at d = 1,000 is 4 MB: a fresh buffer each exchange costs its first touch of every page
// and, as memory outside the JavaScript heap, an early garbage collection, every round. A buffer
// goes back to the pool only once the WebSocket has written the frame out (its send callback):
// the client masks the frame in place (RFC 6455 section 5.3) and the socket may still be
// writing it after send returns.
//
// Limits: at most FREE_BUFFERS_MAX buffers wait in the pool; a buffer is reused for a frame that
// fits it and is at least half its size, so that one large frame does not pin its memory under
// the small frames that follow.

/** Buffers kept between sends: one frame per exchange is in flight at a time, plus one spare. */
const FREE_BUFFERS_MAX = 2;

export class FrameBuffers {
  private readonly free: ArrayBuffer[] = [];

  /** A frame of `length` bytes, in a buffer of the pool or a new one (its bytes not zeroed). */
  take(length: number): Uint8Array {
    const i = this.free.findIndex((b) => b.byteLength >= length && b.byteLength <= 2 * length);
    const buffer =
      i >= 0 ? this.free.splice(i, 1)[0] : (Buffer.allocUnsafeSlow(length).buffer as ArrayBuffer);
    return new Uint8Array(buffer, 0, length);
  }

  /** Gives a frame's buffer back once it is written out; beyond the limit it is let go. */
  give(frame: Uint8Array): void {
    if (this.free.length < FREE_BUFFERS_MAX) this.free.push(frame.buffer as ArrayBuffer);
  }

  /** Buffers waiting in the pool (tests). */
  get freeCount(): number {
    return this.free.length;
  }
}
