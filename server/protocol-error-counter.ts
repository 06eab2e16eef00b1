// Protocol errors by reason: bad messages a worker sent us, errors workers reported, and
// malformed WebSocket frames and connection limits that cost a peer its connection. The metrics endpoint reads these
// counters later; the results record them.

import type { FrameErrorReason, ProtocolErrorCode } from '../src/protocol/index.js';
import type { LimitReason } from './limit-reasons.js';

export interface ProtocolErrorCounts {
  received: Record<string, number>;
  reported: Record<string, number>;
  /** connections closed for a malformed frame, by reason */
  frame: Record<string, number>;
  /** connections closed for passing a connection limit, by reason */
  limit: Record<string, number>;
}

export class ProtocolErrorCounter {
  /** bad messages received, by the code of the error we answered with */
  private readonly received = new Map<ProtocolErrorCode, number>();
  /** error messages workers sent, by their code */
  private readonly reported = new Map<ProtocolErrorCode, number>();
  /** connections closed for a malformed frame, by reason */
  private readonly frame = new Map<FrameErrorReason, number>();
  /** connections closed for passing a connection limit, by reason */
  private readonly limit = new Map<LimitReason, number>();

  countReceived(code: ProtocolErrorCode): void {
    this.received.set(code, (this.received.get(code) ?? 0) + 1);
  }

  countReported(code: ProtocolErrorCode): void {
    this.reported.set(code, (this.reported.get(code) ?? 0) + 1);
  }

  countFrame(reason: FrameErrorReason): void {
    this.frame.set(reason, (this.frame.get(reason) ?? 0) + 1);
  }

  countLimit(reason: LimitReason): void {
    this.limit.set(reason, (this.limit.get(reason) ?? 0) + 1);
  }

  snapshot(): ProtocolErrorCounts {
    return {
      received: Object.fromEntries(this.received),
      reported: Object.fromEntries(this.reported),
      frame: Object.fromEntries(this.frame),
      limit: Object.fromEntries(this.limit),
    };
  }

  totalReceived(): number {
    let total = 0;
    for (const n of this.received.values()) total += n;
    return total;
  }
}
