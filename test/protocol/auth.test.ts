import { describe, expect, it } from 'vitest';
import { createChallengeNonce, proveKey, verifyProof } from '../../src/protocol/auth.js';
import { NONCE_BYTES, PROOF_BYTES } from '../../src/protocol/messages.js';

const hex = (bytes: Uint8Array) => Buffer.from(bytes).toString('hex');

describe('proveKey', () => {
  it('is HMAC-SHA256 keyed by the shared key (RFC 4231 section 4.2, test case 1)', () => {
    const key = new Uint8Array(20).fill(0x0b);
    const data = new TextEncoder().encode('Hi There');
    expect(hex(proveKey(key, data))).toBe(
      'b0344c61d8db38535ca8afceaf0bf12b881dc200c9833da726e9376c2e32cff7',
    );
  });

  it('takes a string key as its UTF-8 bytes (RFC 4231 section 4.3, test case 2: key "Jefe")', () => {
    const data = new TextEncoder().encode('what do ya want for nothing?');
    expect(hex(proveKey('Jefe', data))).toBe(
      '5bdcc146bf60754e6a042426089575c75a003f089d2739839dec58b964ec3843',
    );
  });

  it('differs per nonce, so a recorded proof is useless on the next connection', () => {
    const a = createChallengeNonce();
    const b = createChallengeNonce();
    expect(a.length).toBe(NONCE_BYTES);
    expect(hex(a)).not.toBe(hex(b));
    expect(proveKey('a-shared-key', a).length).toBe(PROOF_BYTES);
    expect(hex(proveKey('a-shared-key', a))).not.toBe(hex(proveKey('a-shared-key', b)));
    expect(verifyProof('a-shared-key', b, proveKey('a-shared-key', a))).toBe(false);
  });

  it('refuses an empty key or nonce', () => {
    expect(() => proveKey('', createChallengeNonce())).toThrow(RangeError);
    expect(() => proveKey('a-shared-key', new Uint8Array(0))).toThrow(RangeError);
  });
});

describe('verifyProof', () => {
  const nonce = createChallengeNonce();

  it('accepts the proof of the right key', () => {
    expect(verifyProof('right', nonce, proveKey('right', nonce))).toBe(true);
  });

  it('refuses the proof of a wrong key, a altered proof, a truncated proof', () => {
    const proof = proveKey('right', nonce);
    expect(verifyProof('right', nonce, proveKey('wrong', nonce))).toBe(false);
    const altered = proof.slice();
    altered[PROOF_BYTES - 1] ^= 1;
    expect(verifyProof('right', nonce, altered)).toBe(false);
    expect(verifyProof('right', nonce, proof.subarray(0, 16))).toBe(false);
  });
});
