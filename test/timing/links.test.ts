import { describe, expect, it } from 'vitest';
import { timingSchema } from '../../src/scenario/schema.js';
import {
  downlinkSecondsFor,
  drawLinks,
  uplinkSecondsFor,
  type ClientLink,
} from '../../src/timing/links.js';

// The latency-bandwidth model of a message's time, latency + bytes / bandwidth (common practice;
// Hockney's alpha-beta model). The numbers are powers of two and small integers so that the
// expected times are exact in binary floating point.
const link: ClientLink = {
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

describe('per-client links', () => {
  const linksOf = (links: unknown, clientCount: number, seed = 7) =>
    drawLinks(timingSchema.parse({ links }).links, clientCount, seed);

  it('give every client the one link a scenario of single values names', () => {
    const links = linksOf(link, 3);
    expect(links).toEqual([link, link, link]);
  });

  it('take a list as one value per client, in client order', () => {
    const links = linksOf({ uplinkBytesPerSecond: [1000, 2000, 4000], latencySeconds: 0.5 }, 3);
    expect(links.map((l) => l.uplinkBytesPerSecond)).toEqual([1000, 2000, 4000]);
    expect(links.map((l) => l.latencySeconds)).toEqual([0.5, 0.5, 0.5]);
    // the schema's default downlink, 1e9 bytes per second
    expect(links.map((l) => l.downlinkBytesPerSecond)).toEqual([1e9, 1e9, 1e9]);
  });

  it('refuse a list whose length is not the client count, naming the field', () => {
    expect(() => linksOf({ latencySeconds: [0, 0.1] }, 3)).toThrowError(
      expect.objectContaining({
        code: 'E_TIMING_LINKS_LENGTH',
        fieldPath: 'timing.links.latencySeconds',
      }),
    );
  });

  it('draw a uniform range per client within its bounds, the same for the same seed', () => {
    const spec = { uplinkBytesPerSecond: { kind: 'uniform', min: 1000, max: 3000 } };
    const links = linksOf(spec, 200);
    for (const l of links) {
      expect(l.uplinkBytesPerSecond).toBeGreaterThanOrEqual(1000);
      expect(l.uplinkBytesPerSecond).toBeLessThan(3000);
    }
    expect(new Set(links.map((l) => l.uplinkBytesPerSecond)).size).toBe(200);
    expect(linksOf(spec, 200)).toEqual(links);
    // a client's draw does not depend on how many clients there are
    expect(linksOf(spec, 5)).toEqual(links.slice(0, 5));
  });

  it('draw a lognormal around its median: half the clients on either side', () => {
    const links = linksOf(
      { downlinkBytesPerSecond: { kind: 'lognormal', median: 1e6, sigma: 1 } },
      400,
    );
    const below = links.filter((l) => l.downlinkBytesPerSecond < 1e6).length;
    // Binomial(400, 1/2) has standard deviation 10; 4 of them is common practice for a
    // test that must not flake.
    expect(Math.abs(below - 200)).toBeLessThanOrEqual(40);
    const flat = linksOf(
      { downlinkBytesPerSecond: { kind: 'lognormal', median: 1e6, sigma: 0 } },
      4,
    );
    expect(flat.map((l) => l.downlinkBytesPerSecond)).toEqual([1e6, 1e6, 1e6, 1e6]);
  });

  it('refuse a draw that leaves the finite range, naming the field', () => {
    expect(() =>
      linksOf({ uplinkBytesPerSecond: { kind: 'lognormal', median: 1, sigma: 1e6 } }, 50),
    ).toThrowError(
      expect.objectContaining({
        code: 'E_TIMING_LINK_NOT_FINITE',
        fieldPath: 'timing.links.uplinkBytesPerSecond',
      }),
    );
  });

  it('are refused by the schema where a bandwidth is not positive', () => {
    expect(timingSchema.safeParse({ links: { uplinkBytesPerSecond: [1, 0] } }).success).toBe(false);
    expect(
      timingSchema.safeParse({ links: { latencySeconds: { kind: 'uniform', min: 2, max: 1 } } })
        .success,
    ).toBe(false);
  });
});
