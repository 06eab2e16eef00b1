// Bytes of the run at three layers (DESIGN.md, Bytes): payload (the vectors' information),
// encoded (the codec's frame) and wire (the socket's counters, WebSocket framing included). Round
// traffic (downs and ups frames) is kept by client, direction and field; everything else
// (handshake, heartbeats, errors, done) is control traffic, kept apart so that the wire totals
// reconcile with the sockets' own counters.
//
// A round frame carries several clients' entries. A client's encoded bytes are its own entry's
// plus an even share of the frame's common bytes (the envelope and, for downs, the common
// section), its wire bytes those plus an even share of the frame's RFC 6455 header; remainders
// of a share go one byte each to the lowest client ids. So per-client bytes sum to the frame's
// exactly, at both layers. Payload stays the information each client receives or sends: a
// broadcast sent once counts in the payload of every client it serves.

export type Direction = 'up' | 'down';

export interface LayerBytes {
  payload: number;
  encoded: number;
  wire: number;
}

export interface DirectionBytes {
  up: number;
  down: number;
}

function zeroLayers(): LayerBytes {
  return { payload: 0, encoded: 0, wire: 0 };
}

/** One client's entry in a round frame. */
export interface FrameEntryBytes {
  clientId: number;
  /** encoded bytes of the entry itself */
  entryBytes: number;
  /** payload bytes per field the client receives or sends (common fields included) */
  fieldPayloadBytes: Readonly<Record<string, number>>;
}

/** A client's share of a frame at the codec and socket layers. */
export interface FrameShare {
  encodedBytes: number;
  wireBytes: number;
}

/** `total` split evenly over `count` shares, one extra byte each to the first total mod count. */
function evenShares(total: number, count: number): number[] {
  const base = Math.floor(total / count);
  const remainder = total - base * count;
  return Array.from({ length: count }, (_, i) => base + (i < remainder ? 1 : 0));
}

/**
 * Each entry's share of a frame of `frameEncodedBytes` (codec) and `frameWireBytes` (socket):
 * its entry plus an even split of the rest, remainders to the lowest client ids. The shares sum
 * to the frame's bytes exactly.
 */
export function frameShares(
  entries: readonly Pick<FrameEntryBytes, 'clientId' | 'entryBytes'>[],
  frameEncodedBytes: number,
  frameWireBytes: number,
): Map<number, FrameShare> {
  const byId = [...entries].sort((a, b) => a.clientId - b.clientId);
  const entriesBytes = byId.reduce((sum, e) => sum + e.entryBytes, 0);
  const commonBytes = frameEncodedBytes - entriesBytes;
  const headerBytes = frameWireBytes - frameEncodedBytes;
  if (commonBytes < 0 || headerBytes < 0)
    throw new RangeError(
      `a frame of ${frameEncodedBytes} encoded and ${frameWireBytes} wire bytes cannot hold entries of ${entriesBytes}`,
    );
  const common = evenShares(commonBytes, byId.length);
  const header = evenShares(headerBytes, byId.length);
  const out = new Map<number, FrameShare>();
  byId.forEach((e, i) => {
    const encodedBytes = e.entryBytes + common[i];
    out.set(e.clientId, { encodedBytes, wireBytes: encodedBytes + header[i] });
  });
  return out;
}

export class ByteLedger {
  private readonly byClient = new Map<number, { up: LayerBytes; down: LayerBytes }>();
  /** payload bytes by direction and field name */
  private readonly byField: Record<Direction, Map<string, number>> = {
    up: new Map(),
    down: new Map(),
  };
  private readonly control: Record<Direction, { encoded: number; wire: number }> = {
    up: { encoded: 0, wire: 0 },
    down: { encoded: 0, wire: 0 },
  };

  /** One round frame of `direction`: every entry's client gets its share; returns the shares. */
  recordRoundFrame(
    direction: Direction,
    entries: readonly FrameEntryBytes[],
    frameEncodedBytes: number,
    frameWireBytes: number,
  ): Map<number, FrameShare> {
    const shares = frameShares(entries, frameEncodedBytes, frameWireBytes);
    for (const e of entries) {
      const share = shares.get(e.clientId)!;
      this.recordClientBytes(
        direction,
        e.clientId,
        e.fieldPayloadBytes,
        share.encodedBytes,
        share.wireBytes,
      );
    }
    return shares;
  }

  private recordClientBytes(
    direction: Direction,
    clientId: number,
    fieldPayloadBytes: Readonly<Record<string, number>>,
    encodedBytes: number,
    wireBytes: number,
  ): void {
    let entry = this.byClient.get(clientId);
    if (entry === undefined) {
      entry = { up: zeroLayers(), down: zeroLayers() };
      this.byClient.set(clientId, entry);
    }
    const layers = entry[direction];
    for (const [field, bytes] of Object.entries(fieldPayloadBytes)) {
      layers.payload += bytes;
      this.byField[direction].set(field, (this.byField[direction].get(field) ?? 0) + bytes);
    }
    layers.encoded += encodedBytes;
    layers.wire += wireBytes;
  }

  /** Any other message (no payload layer: it carries no vectors). */
  recordControlMessage(direction: Direction, encodedBytes: number, wireBytes: number): void {
    this.control[direction].encoded += encodedBytes;
    this.control[direction].wire += wireBytes;
  }

  /** Round traffic totals by layer and direction. */
  roundTotals(): Record<keyof LayerBytes, DirectionBytes> {
    const out = {
      payload: { up: 0, down: 0 },
      encoded: { up: 0, down: 0 },
      wire: { up: 0, down: 0 },
    };
    for (const entry of this.byClient.values()) {
      for (const direction of ['up', 'down'] as const) {
        out.payload[direction] += entry[direction].payload;
        out.encoded[direction] += entry[direction].encoded;
        out.wire[direction] += entry[direction].wire;
      }
    }
    return out;
  }

  controlTotals(): Record<'encoded' | 'wire', DirectionBytes> {
    return {
      encoded: { up: this.control.up.encoded, down: this.control.down.encoded },
      wire: { up: this.control.up.wire, down: this.control.down.wire },
    };
  }

  /** Payload bytes by field name, per direction. */
  payloadByField(): Record<Direction, Record<string, number>> {
    return { up: Object.fromEntries(this.byField.up), down: Object.fromEntries(this.byField.down) };
  }

  /** Layers by client id, per direction. */
  clientTotals(): Record<string, { up: LayerBytes; down: LayerBytes }> {
    const out: Record<string, { up: LayerBytes; down: LayerBytes }> = {};
    for (const [id, entry] of [...this.byClient].sort((a, b) => a[0] - b[0]))
      out[String(id)] = { up: { ...entry.up }, down: { ...entry.down } };
    return out;
  }
}
