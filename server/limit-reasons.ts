// Why the coordinator dropped a connection that broke no frame rule but passed a connection
// limit (src/protocol/limits.ts, CONNECTION_LIMITS): stable reasons for the protocol-errors
// metric (origin "limit"), outcome.json and the log.

export const LIMIT_REASONS = [
  /** no accepted hello within handshakeDeadlineSeconds of the TCP accept */
  'E_LIMIT_HANDSHAKE_DEADLINE',
  /** the oldest unauthenticated connection, evicted for a new one past unauthenticatedConnectionsMax */
  'E_LIMIT_UNAUTHENTICATED',
  /** more messages than one per down plus the unsolicited rate */
  'E_LIMIT_MESSAGE_RATE',
  /** more bad messages than the bad-message burst and rate */
  'E_LIMIT_BAD_MESSAGES',
  /** more bytes queued for a peer that does not read than pendingBytesMaxFor allows */
  'E_LIMIT_PENDING_BYTES',
] as const;

export type LimitReason = (typeof LIMIT_REASONS)[number];
