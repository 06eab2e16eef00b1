// The one call a receiver makes for every incoming frame: size check, decode, validate.

import { decodeMessage } from './codec.js';
import type { Message } from './messages.js';
import { validateMessage, type ValidationContext } from './validate.js';

/**
 * A frame from a peer -> a message this receiver may use now. Throws ProtocolError (the
 * receiver replies with an error message carrying its code, counts it, and goes on).
 */
export function receiveMessage(frame: Uint8Array, context: ValidationContext): Message {
  return validateMessage(decodeMessage(frame, context.limits.maxFrameBytes), context);
}
