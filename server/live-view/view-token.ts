// Proof of the run's key for a viewer beyond loopback. The coordinator derives a view token from
// the workers' key, HMAC-SHA256(key, VIEW_TOKEN_LABEL) (RFC 2104), and prints a link that
// carries it in the URL's fragment, which a browser never sends in a request line. The page
// hands the token over its push channel. The key itself never appears in a URL or a log, and a
// token lets its holder watch, never join: HMAC is one-way, so the key cannot be had from it.

import { createHmac, timingSafeEqual } from 'node:crypto';

/** Names what the HMAC is for, so that a view token can never stand in for a worker's proof. */
const VIEW_TOKEN_LABEL = 'roundwire live view token, version 1';

/** The longest token a viewer may present: a base64url SHA-256 digest is 43 characters. */
export const VIEW_TOKEN_CHARS_MAX = 64;

/** The view token of `key`, base64url (RFC 4648 section 5), so that it sits in a URL unescaped. */
export function viewTokenFor(key: Uint8Array): string {
  return createHmac('sha256', key).update(VIEW_TOKEN_LABEL).digest('base64url');
}

/** True when `presented` is the view token of `key`; compares in constant time. */
export function viewTokenMatches(key: Uint8Array, presented: string): boolean {
  const expected = Buffer.from(viewTokenFor(key));
  const given = Buffer.from(presented.slice(0, VIEW_TOKEN_CHARS_MAX));
  return given.length === expected.length && timingSafeEqual(given, expected);
}
