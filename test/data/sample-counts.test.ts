import { describe, expect, it } from 'vitest';
import { DataError } from '../../src/data/data-error.js';
import { samplesForAllClients, samplesForClient } from '../../src/data/sample-counts.js';

describe('samplesForClient', () => {
  it('gives one count to every client', () => {
    expect(samplesForAllClients(40, 3, 1)).toEqual([40, 40, 40]);
  });

  it('takes a list as one count per client (quantity skew)', () => {
    expect(samplesForAllClients([5, 50, 500], 3, 1)).toEqual([5, 50, 500]);
  });

  it('refuses a list whose length is not the client count, naming data.samplesPerClient', () => {
    let caught: unknown = null;
    try {
      samplesForClient([5, 6], 3, 1, 0);
    } catch (error) {
      caught = error;
    }
    expect(caught).toBeInstanceOf(DataError);
    expect(caught).toMatchObject({ code: 'E_DATA_SPEC', fieldPath: 'data.samplesPerClient' });
    expect((caught as Error).message).toContain('data.samplesPerClient');
  });

  it('draws a uniform range per client, reproducibly, covering both ends', () => {
    // Discrete uniform on {a..b}: mean (a + b)/2 and variance ((b - a + 1)^2 - 1)/12 (common
    // knowledge); the sample mean stays within 5 standard errors.
    const [a, b] = [10, 20];
    const clientCount = 5_000;
    const counts = samplesForAllClients({ uniform: [a, b] }, clientCount, 99);
    expect(samplesForAllClients({ uniform: [a, b] }, clientCount, 99)).toEqual(counts);
    expect(samplesForClient({ uniform: [a, b] }, clientCount, 99, 123)).toBe(counts[123]);
    expect(counts.every((n) => Number.isInteger(n) && n >= a && n <= b)).toBe(true);
    expect(Math.min(...counts)).toBe(a);
    expect(Math.max(...counts)).toBe(b);
    const mean = counts.reduce((s, n) => s + n, 0) / clientCount;
    const variance = ((b - a + 1) ** 2 - 1) / 12;
    expect(Math.abs(mean - (a + b) / 2)).toBeLessThan(5 * Math.sqrt(variance / clientCount));
    expect(samplesForAllClients({ uniform: [a, b] }, clientCount, 100)).not.toEqual(counts);
  });

  it('refuses a client id outside the clients', () => {
    expect(() => samplesForClient(10, 3, 1, 3)).toThrow(DataError);
    expect(() => samplesForClient(10, 3, 1, -1)).toThrow(DataError);
  });
});
