import { describe, expect, it } from 'vitest';
import { downlinkSecondsFor, uplinkSecondsFor, type LinkModel } from '../../src/timing/links.js';

// The latency-bandwidth model of a message's time, latency + bytes / bandwidth (common practice;
// Hockney's alpha-beta model). The numbers are powers of two and small integers so that the
// expected times are exact in binary floating point.
const link: LinkModel = {
  uplinkBytesPerSecond: 1_048_576,
  downlinkBytesPerSecond: 4_194_304,
  latencySeconds: 0.25,
};

describe('links', () => {
  it('take latency + bytes / bandwidth, each direction with its own bandwidth', () => {
    expect(uplinkSecondsFor(link, 2_097_152)).toBe(0.25 + 2);
    expect(downlinkSecondsFor(link, 2_097_152)).toBe(0.25 + 0.5);
  });

  it('charge the latency for an empty message', () => {
    expect(uplinkSecondsFor(link, 0)).toBe(0.25);
    expect(downlinkSecondsFor(link, 0)).toBe(0.25);
  });

  it('grow linearly with size', () => {
    const slope = uplinkSecondsFor(link, 3_000_000) - uplinkSecondsFor(link, 1_000_000);
    expect(slope).toBeCloseTo(2_000_000 / link.uplinkBytesPerSecond, 12);
  });

  it('refuse a negative or non-finite size', () => {
    expect(() => uplinkSecondsFor(link, -1)).toThrowError(
      expect.objectContaining({ code: 'E_TIMING_ARGUMENT' }),
    );
    expect(() => downlinkSecondsFor(link, Number.NaN)).toThrowError(
      expect.objectContaining({ code: 'E_TIMING_ARGUMENT' }),
    );
  });
});
