// Bytes of the run at three layers (DESIGN.md, Bytes): payload (the vectors' information),
// encoded (the codec's frame) and wire (the socket's counters, WebSocket framing included). Round
// traffic (down and up) is kept by client, direction and field; everything else (handshake,
// heartbeats, errors, done) is control traffic, kept apart so that the wire totals reconcile
// with the sockets' own counters.

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

  /** One down or up message of a client. */
  recordRoundMessage(
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
