// The handshake on a fresh connection: challenge(nonce) -> hello(HMAC(key, nonce), version,
// name, capacity). The first message must be the hello: anything else (ups a worker held from
// its previous connection, say) is refused with E_ORDER, and a wrong proof or version with its
// own code; either way the connection is closed before anything of the plan is sent. The time a
// connection may take to get here is the connection gate's (server/connection-gate.ts), and
// the hello's size was bounded by its frame header before it got here (worker-session.ts).

import {
  CLOSE_POLICY_VIOLATION,
  decodeMessage,
  FrameElements,
  HANDSHAKE_LIMITS,
  MESSAGE_TYPES,
  PROTOCOL_VERSION,
  ProtocolError,
  ROUND_FRAME_KINDS,
  createChallengeNonce,
  validateMessage,
  type HelloMessage,
} from '../src/protocol/index.js';
import type { ByteLedger } from './byte-ledger.js';
import type { ProtocolErrorCounter } from './protocol-error-counter.js';
import type { WorkerSession } from './worker-session.js';

export interface HandshakeDeps {
  /** the shared key */
  key: Uint8Array;
  ledger: ByteLedger;
  errors: ProtocolErrorCounter;
  /** rate-limited: one line per kind per interval */
  log: (kind: string, line: string) => void;
}

/** Throws E_ORDER when `raw` is a message of this protocol, but not a hello. */
function assertHelloFirst(raw: unknown): void {
  if (raw instanceof FrameElements) {
    const kind = Object.entries(ROUND_FRAME_KINDS).find(([, code]) => code === raw.elements[0]);
    if (kind === undefined) return;
    throw new ProtocolError(
      'E_ORDER',
      `type: the first message must be hello, got "${kind[0]}" (a worker sends nothing else before its welcome)`,
    );
  }
  if (raw === null || typeof raw !== 'object' || Array.isArray(raw)) return;
  const type = (raw as Record<string, unknown>).type;
  if (type !== 'hello' && (MESSAGE_TYPES as readonly unknown[]).includes(type)) {
    throw new ProtocolError(
      'E_ORDER',
      `type: the first message must be hello, got "${String(type)}" (a worker sends nothing else before its welcome)`,
    );
  }
}

/** Resolves to the worker's hello, or null when it was refused or went away. */
export function awaitHello(
  session: WorkerSession,
  deps: HandshakeDeps,
): Promise<HelloMessage | null> {
  return new Promise((resolve) => {
    const nonce = createChallengeNonce();
    let settled = false;
    const settle = (hello: HelloMessage | null): void => {
      if (settled) return;
      settled = true;
      session.onFrame(() => undefined);
      resolve(hello);
    };
    const refuse = (error: ProtocolError): void => {
      deps.errors.countReceived(error.code);
      deps.log('refused hellos', `${session.label()} refused (${error.code}): ${error.message}`);
      const sent = session.send({
        type: 'error',
        code: error.code,
        message: error.message.slice(0, HANDSHAKE_LIMITS.maxErrorMessageLength),
      });
      deps.ledger.recordControlMessage('down', sent.encodedBytes, sent.wireBytes);
      session.moveTo('refused');
      session.close(CLOSE_POLICY_VIOLATION, error.code);
      settle(null);
    };
    session.onClose(() => {
      if (!settled)
        deps.log('handshakes cut short', `${session.label()} closed during the handshake`);
      settle(null);
    });
    session.onFrame((frame, wireBytes, frameLimitBytes) => {
      deps.ledger.recordControlMessage('up', frame.byteLength, wireBytes);
      try {
        const raw = decodeMessage(frame, frameLimitBytes);
        assertHelloFirst(raw);
        const message = validateMessage(raw, {
          limits: HANDSHAKE_LIMITS,
          expectedTypes: ['hello'],
          expectedRound: null,
          expectedExchange: null,
          ownedClientIds: null,
          fieldDims: null,
          auth: { key: deps.key, nonce },
        });
        settle(message as HelloMessage);
      } catch (error) {
        if (!(error instanceof ProtocolError)) throw error;
        refuse(error);
      }
    });
    const sent = session.send({ type: 'challenge', protocolVersion: PROTOCOL_VERSION, nonce });
    deps.ledger.recordControlMessage('down', sent.encodedBytes, sent.wireBytes);
  });
}
