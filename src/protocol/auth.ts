// Challenge-response with a shared token: the server sends a fresh random nonce, the worker
// answers HMAC-SHA256(token, nonce) (RFC 2104 with SHA-256, as RFC 4231 specifies it). The
// token never crosses the wire, and a proof recorded on one connection is useless on the next,
// whose nonce differs.

import { createHmac, randomBytes, timingSafeEqual } from 'node:crypto';
import { NONCE_BYTES } from './messages.js';

function assertToken(token: string | Uint8Array): void {
  if (token.length === 0) throw new RangeError('the shared token must not be empty');
}

/** A fresh challenge nonce for one connection (authentication only; no result depends on it). */
export function createChallengeNonce(): Uint8Array {
  return new Uint8Array(randomBytes(NONCE_BYTES));
}

/** The worker's answer to a challenge: HMAC-SHA256 keyed by the token over the nonce. */
export function proveToken(token: string | Uint8Array, nonce: Uint8Array): Uint8Array {
  assertToken(token);
  if (nonce.length === 0) throw new RangeError('the challenge nonce must not be empty');
  return new Uint8Array(createHmac('sha256', token).update(nonce).digest());
}

/** True when `proof` answers `nonce` under `token`; compares in constant time. */
export function verifyProof(token: string | Uint8Array, nonce: Uint8Array, proof: Uint8Array): boolean {
  const expected = proveToken(token, nonce);
  return proof.length === expected.length && timingSafeEqual(proof, expected);
}
