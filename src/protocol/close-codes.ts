// WebSocket close codes the coordinator and the worker send (RFC 6455 section 7.4.1), in one
// place so both ends name a closing the same way.

/** Normal closure: the run is done (RFC 6455 section 7.4.1, 1000). */
export const CLOSE_NORMAL = 1000;

/** Policy violation: a failed handshake, a refused worker, no clients left (RFC 6455 section 7.4.1, 1008). */
export const CLOSE_POLICY_VIOLATION = 1008;
