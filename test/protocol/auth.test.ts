import { describe, expect, it } from 'vitest';
import { createChallengeNonce, proveToken, verifyProof } from '../../src/protocol/auth.js';
import { NONCE_BYTES, PROOF_BYTES } from '../../src/protocol/messages.js';

const hex = (bytes: Uint8Array) => Buffer.from(bytes).toString('hex');

describe('proveToken', () => {
  it('is HMAC-SHA256 keyed by the token (RFC 4231 section 4.2, test case 1)', () => {
    const key = new Uint8Array(20).fill(0x0b);
    const data = new TextEncoder().encode('Hi There');
    expect(hex(proveToken(key, data))).toBe('b0344c61d8db38535ca8afceaf0bf12b881dc200c9833da726e9376c2e32cff7');
  });

  it('takes a string token as its UTF-8 bytes (RFC 4231 section 4.3, test case 2: key "Jefe")', () => {
    const data = new TextEncoder().encode('what do ya want for nothing?');
    expect(hex(proveToken('Jefe', data))).toBe('5bdcc146bf60754e6a042426089575c75a003f089d2739839dec58b964ec3843');
  });

  it('differs per nonce, so a recorded proof is useless on the next connection', () => {
    const a = createChallengeNonce();
    const b = createChallengeNonce();
    expect(a.length).toBe(NONCE_BYTES);
    expect(hex(a)).not.toBe(hex(b));
    expect(proveToken('token', a).length).toBe(PROOF_BYTES);
    expect(hex(proveToken('token', a))).not.toBe(hex(proveToken('token', b)));
    expect(verifyProof('token', b, proveToken('token', a))).toBe(false);
  });

  it('refuses an empty token or nonce', () => {
    expect(() => proveToken('', createChallengeNonce())).toThrow(RangeError);
    expect(() => proveToken('token', new Uint8Array(0))).toThrow(RangeError);
  });
});

describe('verifyProof', () => {
  const nonce = createChallengeNonce();

  it('accepts the proof of the right token', () => {
    expect(verifyProof('right', nonce, proveToken('right', nonce))).toBe(true);
  });

  it('refuses the proof of a wrong token, a altered proof, a truncated proof', () => {
    const proof = proveToken('right', nonce);
    expect(verifyProof('right', nonce, proveToken('wrong', nonce))).toBe(false);
    const altered = proof.slice();
    altered[PROOF_BYTES - 1] ^= 1;
    expect(verifyProof('right', nonce, altered)).toBe(false);
    expect(verifyProof('right', nonce, proof.subarray(0, 16))).toBe(false);
  });
});
