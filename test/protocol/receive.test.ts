import { describe, expect, it } from 'vitest';
import { encodeMessage } from '../../src/protocol/codec.js';
import { ProtocolError } from '../../src/protocol/errors.js';
import { receiveMessage } from '../../src/protocol/receive.js';
import { encodeSample, sampleMessages, serverContext } from './sample-messages.js';
import { codeOf } from '../support/error-code.js';

const protocolErrorCode = (action: () => unknown): string => codeOf(action, ProtocolError);

describe('receiveMessage', () => {
  const upFrame = encodeSample(sampleMessages().find((m) => m.type === 'ups')!);

  it('applies the frame limit of the context before anything else', () => {
    const limits = { ...serverContext().limits, maxFrameBytes: upFrame.length - 1 };
    expect(protocolErrorCode(() => receiveMessage(upFrame, serverContext({ limits })))).toBe(
      'E_SIZE',
    );
    expect(
      receiveMessage(
        upFrame,
        serverContext({ limits: { ...limits, maxFrameBytes: upFrame.length } }),
      ).type,
    ).toBe('ups');
  });

  it('reports decoding faults as E_DECODE and shape faults as E_TYPE', () => {
    expect(
      protocolErrorCode(() =>
        receiveMessage(upFrame.subarray(0, upFrame.length - 1), serverContext()),
      ),
    ).toBe('E_DECODE');
    expect(
      protocolErrorCode(() =>
        receiveMessage(encodeMessage({ type: 'done', reason: 'stopped' }), serverContext()),
      ),
    ).toBe('E_TYPE');
  });
});
