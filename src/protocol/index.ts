// The protocol's public surface, for the coordinator (server/) and the worker (client/).
//
// Sending:   encodeMessage({ type: 'heartbeat', ... }) for a control message; a round frame:
//            writeUpsFrame(round, exchangeIndex, entries), or a downs frame from its pieces
//            (encodeDownsPrefix, encodeDownEntry, assembleDownsFrame)
// Receiving: const message = receiveMessage(frame, context)  // throws ProtocolError
//            then fromWire(entry.fields.delta) for the typed arrays.

export { createChallengeNonce, proveKey, verifyProof } from './auth.js';
export {
  CLOSE_INVALID_PAYLOAD,
  CLOSE_MESSAGE_TOO_BIG,
  CLOSE_NORMAL,
  CLOSE_POLICY_VIOLATION,
  CLOSE_PROTOCOL_ERROR,
} from './close-codes.js';
export { decodeMessage, encodeMessage, FrameElements, NESTING_DEPTH_MAX } from './codec.js';
export {
  assembleDownsFrame,
  downEntryBytes,
  downsFrameBytes,
  encodeDownEntry,
  encodeDownsPrefix,
  encodeRoundFrame,
  upEntryBytes,
  upsFrameBytes,
  vectorElementBytes,
  writeUpsFrame,
  type DownsPrefix,
} from './round-frame-encode.js';
export {
  exchangeSlots,
  fieldSlots,
  ROUND_FRAME_KINDS,
  ROUND_FRAME_LAYOUT,
} from './round-frame-layout.js';
export {
  isProtocolErrorCode,
  PROTOCOL_ERROR_CODES,
  ProtocolError,
  type ProtocolErrorCode,
} from './errors.js';
export {
  classifyFrameError,
  FRAME_ERROR_REASONS,
  type FrameErrorReason,
  type FrameFailure,
} from './frame-errors.js';
export { frameBytes, frameHeaderBytes } from './framing.js';
export {
  CONNECTION_LIMITS,
  controlFrameBytesMax,
  HANDSHAKE_LIMITS,
  helloFrameBytesMax,
  limitsForPlan,
  pendingBytesMaxFor,
  roundFrameBytesMaxFor,
  stateFrameBytesMaxFor,
  protocolLimitsSchema,
  type PlanShape,
  type ProtocolLimits,
} from './limits.js';
export * from './messages.js';
export * from './field-dims.js';
export { receiveMessage } from './receive.js';
export { validateMessage, type ValidationContext } from './validate.js';
export { fromWireState, toWireState } from './wire-state.js';
export {
  checkWireVector,
  fromWire,
  toWire,
  type ValueWidthBytes,
  type WireVector,
} from './wire-vector.js';
