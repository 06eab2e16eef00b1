// The handshake on a fresh connection: challenge(nonce) -> hello(HMAC(key, nonce), version,
// name, capacity). A wrong proof or version gets an error with its code and the connection is
// closed before anything of the plan is sent; so does silence past the handshake limit.

import {
  CLOSE_POLICY_VIOLATION,
  HANDSHAKE_LIMITS,
  PROTOCOL_VERSION,
  ProtocolError,
  createChallengeNonce,
  receiveMessage,
  type HelloMessage,
} from '../src/protocol/index.js';
import type { ByteLedger } from './byte-ledger.js';
import type { ProtocolErrorCounter } from './protocol-error-counter.js';
import type { WorkerSession } from './worker-session.js';

export interface HandshakeDeps {
  /** the shared key */
  key: Uint8Array;
  timeoutSeconds: number;
  ledger: ByteLedger;
  errors: ProtocolErrorCounter;
  log: (line: string) => void;
}

/** Resolves to the worker's hello, or null when it was refused, fell silent or went away. */
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
      clearTimeout(timer);
      session.onFrame(() => undefined);
      resolve(hello);
    };
    const refuse = (error: ProtocolError): void => {
      deps.errors.countReceived(error.code);
      deps.log(`${session.label()} refused (${error.code}): ${error.message}`);
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
    const timer = setTimeout(() => {
      deps.log(`${session.label()} sent no hello within ${deps.timeoutSeconds} s`);
      session.moveTo('refused');
      session.terminate();
      settle(null);
    }, deps.timeoutSeconds * 1000);
    session.onClose(() => {
      if (!settled) deps.log(`${session.label()} closed during the handshake`);
      settle(null);
    });
    session.onFrame((frame, wireBytes) => {
      deps.ledger.recordControlMessage('up', frame.byteLength, wireBytes);
      try {
        const message = receiveMessage(frame, {
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
