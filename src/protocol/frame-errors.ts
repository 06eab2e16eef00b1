// What a malformed WebSocket frame earns. The ws library rejects such a frame with one of its
// WS_ERR_* codes, emits 'error' on the connection and closes it with the RFC 6455 section
// 7.4.1 code the violation calls for; this table names each violation under a stable reason
// (for the protocol-errors metric and the log) and states the close code the peer is sent.

import {
  CLOSE_INVALID_PAYLOAD,
  CLOSE_MESSAGE_TOO_BIG,
  CLOSE_POLICY_VIOLATION,
  CLOSE_PROTOCOL_ERROR,
} from './close-codes.js';

export const FRAME_ERROR_REASONS = [
  'E_FRAME_MASK',
  'E_FRAME_OPCODE',
  'E_FRAME_RSV',
  'E_FRAME_CONTROL',
  'E_FRAME_CLOSE_CODE',
  'E_FRAME_UTF8',
  'E_FRAME_TOO_BIG',
  'E_FRAME_TOO_MANY_PARTS',
  'E_FRAME_OTHER',
] as const;

export type FrameErrorReason = (typeof FRAME_ERROR_REASONS)[number];

export interface FrameFailure {
  reason: FrameErrorReason;
  /** the close code (RFC 6455 section 7.4.1) the connection is closed with */
  closeCode: number;
  /** the library's own words, for the log */
  detail: string;
}

/** ws's error codes (its lib/receiver.js) by the reason and close code we give them. */
const FAILURE_OF_WS_CODE: Readonly<
  Record<string, { reason: FrameErrorReason; closeCode: number }>
> = {
  WS_ERR_EXPECTED_MASK: { reason: 'E_FRAME_MASK', closeCode: CLOSE_PROTOCOL_ERROR },
  WS_ERR_UNEXPECTED_MASK: { reason: 'E_FRAME_MASK', closeCode: CLOSE_PROTOCOL_ERROR },
  WS_ERR_INVALID_OPCODE: { reason: 'E_FRAME_OPCODE', closeCode: CLOSE_PROTOCOL_ERROR },
  WS_ERR_UNEXPECTED_RSV_1: { reason: 'E_FRAME_RSV', closeCode: CLOSE_PROTOCOL_ERROR },
  WS_ERR_UNEXPECTED_RSV_2_3: { reason: 'E_FRAME_RSV', closeCode: CLOSE_PROTOCOL_ERROR },
  WS_ERR_EXPECTED_FIN: { reason: 'E_FRAME_CONTROL', closeCode: CLOSE_PROTOCOL_ERROR },
  WS_ERR_INVALID_CONTROL_PAYLOAD_LENGTH: {
    reason: 'E_FRAME_CONTROL',
    closeCode: CLOSE_PROTOCOL_ERROR,
  },
  WS_ERR_INVALID_CLOSE_CODE: { reason: 'E_FRAME_CLOSE_CODE', closeCode: CLOSE_PROTOCOL_ERROR },
  WS_ERR_INVALID_UTF8: { reason: 'E_FRAME_UTF8', closeCode: CLOSE_INVALID_PAYLOAD },
  WS_ERR_UNSUPPORTED_MESSAGE_LENGTH: {
    reason: 'E_FRAME_TOO_BIG',
    closeCode: CLOSE_MESSAGE_TOO_BIG,
  },
  WS_ERR_UNSUPPORTED_DATA_PAYLOAD_LENGTH: {
    reason: 'E_FRAME_TOO_BIG',
    closeCode: CLOSE_MESSAGE_TOO_BIG,
  },
  WS_ERR_TOO_MANY_BUFFERED_PARTS: {
    reason: 'E_FRAME_TOO_MANY_PARTS',
    closeCode: CLOSE_POLICY_VIOLATION,
  },
};

/** The reason and close code of an error a WebSocket connection emitted; unknown ones are protocol errors. */
export function classifyFrameError(error: Error & { code?: string }): FrameFailure {
  const known = FAILURE_OF_WS_CODE[error.code ?? ''];
  return {
    ...(known ?? { reason: 'E_FRAME_OTHER', closeCode: CLOSE_PROTOCOL_ERROR }),
    detail: error.message,
  };
}
