// WebSocket framing overhead, so that the socket's byte counters can be reconciled with the
// codec's: every message travels as one frame (no fragmentation, no permessage-deflate), and
// a frame is its header plus the payload. Header layout from RFC 6455 section 5.2: 2 bytes
// (FIN, RSV, opcode; MASK bit and a 7-bit length), then a 16-bit extended length for payloads
// of 126..65535 bytes or a 64-bit one from 65536 up, then a 4-byte masking key on frames a
// client sends (section 5.3: a client masks every frame, a server none).

/** Bytes of the RFC 6455 header of one frame carrying `payloadLength` bytes. */
export function frameHeaderBytes(payloadLength: number, masked: boolean): number {
  if (!Number.isSafeInteger(payloadLength) || payloadLength < 0) {
    throw new RangeError(`payload length must be a non-negative integer, got ${payloadLength}`);
  }
  const extendedLengthBytes = payloadLength < 126 ? 0 : payloadLength < 65536 ? 2 : 8;
  return 2 + extendedLengthBytes + (masked ? 4 : 0);
}

/** Bytes one message of `payloadLength` bytes puts on the socket, header included. */
export function frameBytes(payloadLength: number, masked: boolean): number {
  return frameHeaderBytes(payloadLength, masked) + payloadLength;
}
