// WebSocket close codes the coordinator and the worker send (RFC 6455 section 7.4.1), in one
// place so both ends name a closing the same way.

/** Normal closure: the run is done (RFC 6455 section 7.4.1, 1000). */
export const CLOSE_NORMAL = 1000;

/** Protocol error: a frame that breaks RFC 6455 framing (mask, opcode, RSV bits, control frames) (RFC 6455 section 7.4.1, 1002). */
export const CLOSE_PROTOCOL_ERROR = 1002;

/** Invalid payload data: a text frame that is not UTF-8 (RFC 6455 section 7.4.1, 1007). */
export const CLOSE_INVALID_PAYLOAD = 1007;

/** Policy violation: a failed handshake, a refused worker, no clients left (RFC 6455 section 7.4.1, 1008). */
export const CLOSE_POLICY_VIOLATION = 1008;

/** Message too big: a frame or message past the receiver's payload limit (RFC 6455 section 7.4.1, 1009). */
export const CLOSE_MESSAGE_TOO_BIG = 1009;
