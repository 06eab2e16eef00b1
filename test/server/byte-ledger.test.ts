// A round frame's bytes shared by its entries' clients: each gets its entry plus an even share
// of the frame's common bytes and of its RFC 6455 header (section 5.2), one byte of each
// remainder to the lowest client ids, so that the shares add up to the frame's bytes exactly.

import { describe, expect, it } from 'vitest';
import { ByteLedger, frameShares } from '../../server/byte-ledger.js';
import { frameBytes } from '../../src/protocol/framing.js';

describe('frameShares', () => {
  it('gives each client its entry, an even share of the rest, remainders to the lowest ids', () => {
    // Entries of 10, 20 and 30 bytes in a frame of 67 encoded bytes: 7 common bytes, 2 each and
    // one more for client 1; a server's frame of 67 bytes has a 2-byte header, one byte each for
    // clients 1 and 4.
    const entries = [
      { clientId: 9, entryBytes: 30 },
      { clientId: 1, entryBytes: 10 },
      { clientId: 4, entryBytes: 20 },
    ];
    const shares = frameShares(entries, 67, frameBytes(67, false));
    expect(Object.fromEntries(shares)).toEqual({
      1: { encodedBytes: 13, wireBytes: 14 },
      4: { encodedBytes: 22, wireBytes: 23 },
      9: { encodedBytes: 32, wireBytes: 32 },
    });
  });

  it('sums to the frame at both layers, for any split', () => {
    for (const clients of [1, 2, 7, 500]) {
      const entries = Array.from({ length: clients }, (_, i) => ({
        clientId: 3 * i,
        entryBytes: 11 + (i % 5),
      }));
      const encoded = entries.reduce((sum, e) => sum + e.entryBytes, 0) + 1000 + clients;
      const wire = frameBytes(encoded, true);
      const shares = [...frameShares(entries, encoded, wire).values()];
      expect(shares.reduce((sum, s) => sum + s.encodedBytes, 0)).toBe(encoded);
      expect(shares.reduce((sum, s) => sum + s.wireBytes, 0)).toBe(wire);
    }
  });

  it('refuses entries larger than their frame', () => {
    expect(() => frameShares([{ clientId: 0, entryBytes: 10 }], 9, 11)).toThrow(RangeError);
  });
});

describe('ByteLedger.recordRoundFrame', () => {
  it("counts each client's payload in full (a broadcast serves each) and its share of the frame", () => {
    const ledger = new ByteLedger();
    ledger.recordRoundFrame(
      'down',
      [
        { clientId: 0, entryBytes: 5, fieldPayloadBytes: { model: 800 } },
        { clientId: 1, entryBytes: 5, fieldPayloadBytes: { model: 800 } },
      ],
      830,
      frameBytes(830, false),
    );
    expect(ledger.roundTotals()).toEqual({
      payload: { up: 0, down: 1600 },
      encoded: { up: 0, down: 830 },
      wire: { up: 0, down: 834 },
    });
    expect(ledger.payloadByField().down).toEqual({ model: 1600 });
  });
});
