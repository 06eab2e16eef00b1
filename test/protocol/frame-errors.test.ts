// Each ws error code maps to a stable reason and the close code RFC 6455 section 7.4.1 gives the
// violation; an error ws does not name is still a protocol error (1002), never a crash.

import { describe, expect, it } from 'vitest';
import { classifyFrameError } from '../../src/protocol/index.js';

function wsError(code: string | undefined): Error & { code?: string } {
  return Object.assign(new RangeError(`ws says ${code}`), code === undefined ? {} : { code });
}

describe('classifyFrameError', () => {
  it('maps ws codes to reasons and RFC 6455 section 7.4.1 close codes', () => {
    const cases: [string, string, number][] = [
      ['WS_ERR_EXPECTED_MASK', 'E_FRAME_MASK', 1002],
      ['WS_ERR_INVALID_OPCODE', 'E_FRAME_OPCODE', 1002],
      ['WS_ERR_UNEXPECTED_RSV_1', 'E_FRAME_RSV', 1002],
      ['WS_ERR_INVALID_CONTROL_PAYLOAD_LENGTH', 'E_FRAME_CONTROL', 1002],
      ['WS_ERR_INVALID_CLOSE_CODE', 'E_FRAME_CLOSE_CODE', 1002],
      ['WS_ERR_INVALID_UTF8', 'E_FRAME_UTF8', 1007],
      ['WS_ERR_UNSUPPORTED_MESSAGE_LENGTH', 'E_FRAME_TOO_BIG', 1009],
      ['WS_ERR_TOO_MANY_BUFFERED_PARTS', 'E_FRAME_TOO_MANY_PARTS', 1008],
    ];
    for (const [code, reason, closeCode] of cases) {
      expect(classifyFrameError(wsError(code))).toEqual({
        reason,
        closeCode,
        detail: `ws says ${code}`,
      });
    }
  });

  it('names an unknown error E_FRAME_OTHER, a protocol error', () => {
    expect(classifyFrameError(wsError(undefined))).toMatchObject({
      reason: 'E_FRAME_OTHER',
      closeCode: 1002,
    });
    expect(classifyFrameError(wsError('ECONNRESET'))).toMatchObject({
      reason: 'E_FRAME_OTHER',
      closeCode: 1002,
    });
  });
});
