// Challenge-response with a shared key: the server sends a fresh random nonce, the worker
// answers HMAC-SHA256(key, nonce) (RFC 2104 with SHA-256, as RFC 4231 specifies it). The key
// never crosses the wire, and a proof recorded on one connection is useless on the next, whose
// nonce differs.

import { createHmac, randomBytes, timingSafeEqual } from 'node:crypto';
import { NONCE_BYTES } from './messages.js';

function assertKey(key: string | Uint8Array): void {
  if (key.length === 0) throw new RangeError('the shared key must not be empty');
}

/** A fresh challenge nonce for one connection (authentication only; no result depends on it). */
export function createChallengeNonce(): Uint8Array {
  return new Uint8Array(randomBytes(NONCE_BYTES));
}

/** The worker's answer to a challenge: HMAC-SHA256 keyed by the shared key over the nonce. */
export function proveKey(key: string | Uint8Array, nonce: Uint8Array): Uint8Array {
  assertKey(key);
  if (nonce.length === 0) throw new RangeError('the challenge nonce must not be empty');
  return new Uint8Array(createHmac('sha256', key).update(nonce).digest());
}

/** True when `proof` answers `nonce` under `key`; compares in constant time. */
export function verifyProof(
  key: string | Uint8Array,
  nonce: Uint8Array,
  proof: Uint8Array,
): boolean {
  const expected = proveKey(key, nonce);
  return proof.length === expected.length && timingSafeEqual(proof, expected);
}
