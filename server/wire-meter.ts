// Wire bytes of each received message, and the socket's own counters (sends are metered by
// their frame size, in worker-session.ts). The bytes of the raw stream are walked frame by frame
// (RFC 6455 section 5.2 header: 2 bytes, a 16- or 64-bit extended length, a 4-byte mask key
// when masked), so that each data message ws emits can be matched with the bytes it occupied on
// the socket, control frames (close, ping, pong) apart. Counting starts after the HTTP upgrade.
//
// The same walk times each data message on the wire: from the socket read that brought its first
// byte to the one that brought its last. That is the message's own transfer time over the link
// (a shaped or slow link shows in it), free of the sender's compute and of the time the message
// waited in the sender's queues before its first byte left.
//
// The same walk enforces the payload limit of a data message by its header alone. ws's own
// limit (maxPayload) is fixed for all connections when the server is made and has no supported
// way to change per connection, while a connection must be held to the tiny hello until it is
// authenticated and to the plan's frame limit after: so ws gets the larger limit, and this walk,
// which sees every header before ws does, reports a message past the current limit the moment its
// header is read, before its payload is buffered or decoded.

import type { Socket } from 'node:net';

const OPCODE_CONTINUATION = 0x0;

/** A data message as the socket carried it. */
export interface WireMessage {
  /** its frames' bytes, headers included */
  wireBytes: number;
  /** seconds from the read holding its first byte to the read holding its last */
  streamSeconds: number;
}
const CONTROL_OPCODE_MIN = 0x8;

export class WireMeter {
  private readonly socket: Socket;
  private readonly readBaselineBytes: number;
  private readonly writeBaselineBytes: number;
  /** bytes of the frame header being read; grows until the header is complete */
  private header: number[] = [];
  /** payload bytes still to come in the current frame */
  private payloadRemainingBytes = 0;
  private currentFrameBytes = 0;
  private currentFrameIsControl = false;
  private currentFrameFin = false;
  /** bytes of the data message being assembled (several frames if the peer fragments) */
  private messageBytes = 0;
  /** when the read holding the first byte of the data message being assembled came (ms) */
  private messageFirstByteMs: number | null = null;
  /** when the read being walked came (ms) */
  private chunkMs = 0;
  /** data messages read but not yet taken by the 'message' handler */
  private readonly completedMessages: WireMessage[] = [];
  /** wire bytes of control frames received */
  controlReadBytes = 0;
  /** payload bytes of the data message being assembled */
  private messagePayloadBytes = 0;
  private payloadLimitBytes: number;
  private readonly onOversize: (payloadBytes: number, limitBytes: number) => void;
  private oversizeReported = false;

  private readonly nowMs: () => number;

  constructor(
    socket: Socket,
    payloadLimitBytes: number,
    onOversize: (payloadBytes: number, limitBytes: number) => void,
    nowMs: () => number = () => performance.now(),
  ) {
    this.socket = socket;
    this.nowMs = nowMs;
    this.payloadLimitBytes = payloadLimitBytes;
    this.onOversize = onOversize;
    this.readBaselineBytes = socket.bytesRead;
    this.writeBaselineBytes = socket.bytesWritten;
    // Before ws's own listener, so that a message's bytes are counted when ws emits it.
    socket.prependListener('data', (chunk: Buffer) => this.scan(chunk));
  }

  /** The largest data message (its payload, summed over its fragments) allowed from now on. */
  setPayloadLimitBytes(bytes: number): void {
    this.payloadLimitBytes = bytes;
  }

  /** The next data message ws emits, as the socket carried it (call once per 'message' event). */
  takeMessage(): WireMessage {
    return this.completedMessages.shift() ?? { wireBytes: 0, streamSeconds: 0 };
  }

  /** The socket's own counters since the upgrade (read once, at the end of a run). */
  totals(): { readBytes: number; writtenBytes: number } {
    return {
      readBytes: this.socket.bytesRead - this.readBaselineBytes,
      writtenBytes: this.socket.bytesWritten - this.writeBaselineBytes,
    };
  }

  private headerLength(): number {
    if (this.header.length < 2) return 2;
    const lengthCode = this.header[1] & 0x7f;
    const masked = (this.header[1] & 0x80) !== 0;
    return 2 + (lengthCode === 126 ? 2 : lengthCode === 127 ? 8 : 0) + (masked ? 4 : 0);
  }

  private startPayload(): void {
    const h = this.header;
    const opcode = h[0] & 0x0f;
    const lengthCode = h[1] & 0x7f;
    let payloadBytes = lengthCode;
    if (lengthCode === 126) payloadBytes = (h[2] << 8) | h[3];
    else if (lengthCode === 127) {
      payloadBytes = 0;
      for (let i = 2; i < 10; i++) payloadBytes = payloadBytes * 256 + h[i];
    }
    this.currentFrameFin = (h[0] & 0x80) !== 0;
    this.currentFrameIsControl = opcode >= CONTROL_OPCODE_MIN && opcode !== OPCODE_CONTINUATION;
    this.currentFrameBytes = h.length + payloadBytes;
    this.payloadRemainingBytes = payloadBytes;
    this.header = [];
    if (!this.currentFrameIsControl) {
      this.messagePayloadBytes += payloadBytes;
      if (this.messagePayloadBytes > this.payloadLimitBytes && !this.oversizeReported) {
        this.oversizeReported = true;
        this.onOversize(this.messagePayloadBytes, this.payloadLimitBytes);
      }
    }
    if (payloadBytes === 0) this.finishFrame();
  }

  private finishFrame(): void {
    if (this.currentFrameIsControl) {
      this.controlReadBytes += this.currentFrameBytes;
      // A control frame between two data messages starts none.
      if (this.messageBytes === 0 && this.messagePayloadBytes === 0) this.messageFirstByteMs = null;
      return;
    }
    this.messageBytes += this.currentFrameBytes;
    if (this.currentFrameFin) {
      this.completedMessages.push({
        wireBytes: this.messageBytes,
        streamSeconds: (this.chunkMs - (this.messageFirstByteMs ?? this.chunkMs)) / 1000,
      });
      this.messageFirstByteMs = null;
      this.messageBytes = 0;
      this.messagePayloadBytes = 0;
    }
  }

  private scan(chunk: Buffer): void {
    this.chunkMs = this.nowMs();
    let i = 0;
    while (i < chunk.length) {
      if (this.payloadRemainingBytes > 0) {
        const take = Math.min(this.payloadRemainingBytes, chunk.length - i);
        this.payloadRemainingBytes -= take;
        i += take;
        if (this.payloadRemainingBytes === 0) this.finishFrame();
        continue;
      }
      // The first header byte of a frame with no data message under way may start one (a
      // control frame between a message's fragments is timed with it: it shares its link).
      if (this.header.length === 0 && this.messageFirstByteMs === null)
        this.messageFirstByteMs = this.chunkMs;
      this.header.push(chunk[i]);
      i += 1;
      if (this.header.length === this.headerLength()) this.startPayload();
    }
  }
}
