// The lengths of the handshake's random and keyed byte strings: the messages carry them, and
// the limits bound the hello by them (a file of its own so that neither imports the other).

/** Bytes of the server's challenge nonce (256 bits: never repeats in practice). */
export const NONCE_BYTES = 32;

/** Bytes of an HMAC-SHA256 proof. */
export const PROOF_BYTES = 32;

/** Bytes of a resume token (256 bits: cannot be guessed within a grace period). */
export const RESUME_TOKEN_BYTES = 32;
