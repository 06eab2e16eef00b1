// Protocol errors by reason: bad messages a worker sent us, and errors workers reported. The
// metrics endpoint reads these counters later; the results record them.

import type { ProtocolErrorCode } from '../src/protocol/index.js';

export class ProtocolErrorCounter {
  /** bad messages received, by the code of the error we answered with */
  private readonly received = new Map<ProtocolErrorCode, number>();
  /** error messages workers sent, by their code */
  private readonly reported = new Map<ProtocolErrorCode, number>();

  countReceived(code: ProtocolErrorCode): void {
    this.received.set(code, (this.received.get(code) ?? 0) + 1);
  }

  countReported(code: ProtocolErrorCode): void {
    this.reported.set(code, (this.reported.get(code) ?? 0) + 1);
  }

  snapshot(): { received: Record<string, number>; reported: Record<string, number> } {
    return { received: Object.fromEntries(this.received), reported: Object.fromEntries(this.reported) };
  }

  totalReceived(): number {
    let total = 0;
    for (const n of this.received.values()) total += n;
    return total;
  }
}
