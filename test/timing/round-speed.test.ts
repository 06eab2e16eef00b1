import { describe, expect, it } from 'vitest';
import { timingSchema } from '../../src/scenario/schema.js';
import {
  speedModelFor,
  stepFactorFor,
  stepSecondsFor,
  type SpeedModel,
} from '../../src/timing/round-speed.js';

// The step-time model is ours (step = cost * s_i * exp(jitter Z) * transient); these tests hold
// the code to that definition, and check the random parts' frequencies and moments within 5
// standard errors (central limit theorem; binomial SE sqrt(p (1 - p) / n) for frequencies).

const seed = 99;

function model(timing: object, clientCount: number): SpeedModel {
  return speedModelFor(timingSchema.parse(timing), clientCount, seed);
}

describe('stepSecondsFor', () => {
  it('without jitter or transients is the base cost times the persistent slowdown', () => {
    const m = model({ stepCostSeconds: 0.002, slowdown: { kind: 'uniform', min: 1, max: 5 } }, 20);
    for (let i = 0; i < 20; i++) {
      for (let round = 0; round < 5; round++)
        expect(stepSecondsFor(m, i, round)).toBe(0.002 * m.slowdowns[i]);
    }
  });

  it('a certain transient event multiplies by its factor', () => {
    const m = model({ stepCostSeconds: 0.5, transient: { probability: 1, factor: 3 } }, 4);
    for (let i = 0; i < 4; i++) expect(stepSecondsFor(m, i, 0)).toBe(1.5);
  });

  it('transient events happen with their probability', () => {
    const probability = 0.2;
    const factor = 5;
    const clients = 100;
    const rounds = 100;
    const m = model({ transient: { probability, factor } }, clients);
    let events = 0;
    for (let i = 0; i < clients; i++)
      for (let round = 0; round < rounds; round++)
        if (stepFactorFor(m, i, round) === factor) events++;
    const n = clients * rounds;
    expect(Math.abs(events / n - probability)).toBeLessThan(
      5 * Math.sqrt((probability * (1 - probability)) / n),
    );
  });

  it('turning jitter up rescales log step time by the same draw and leaves transient events alone', () => {
    // log(factor) = log s_i + jitter z + log(transient): with one z per (client, round),
    // doubling jitter doubles the jitter part exactly, provided the transient draw is untouched.
    // Were it not, the two sides would differ by log 5.
    const transient = { probability: 0.3, factor: 5 };
    const plain = model({ transient }, 30);
    const low = model({ transient, jitter: 0.3 }, 30);
    const high = model({ transient, jitter: 0.6 }, 30);
    for (let i = 0; i < 30; i++) {
      for (let round = 0; round < 20; round++) {
        const base = Math.log(stepFactorFor(plain, i, round));
        const lowShift = Math.log(stepFactorFor(low, i, round)) - base;
        const highShift = Math.log(stepFactorFor(high, i, round)) - base;
        expect(Math.abs(highShift - 2 * lowShift)).toBeLessThan(1e-9);
      }
    }
  });

  it('jitter is lognormal with sigma = jitter: log(step / (cost s_i)) has mean 0 and variance jitter^2', () => {
    // For a sample of n normals, the sample mean has SE sigma / sqrt(n) and the sample variance
    // has SE sigma^2 sqrt(2 / (n - 1)) (the chi-square distribution's variance).
    const jitter = 0.4;
    const clients = 50;
    const rounds = 200;
    const m = model({ jitter, slowdown: { kind: 'pareto', shape: 3 } }, clients);
    const logs: number[] = [];
    for (let i = 0; i < clients; i++) {
      for (let round = 0; round < rounds; round++)
        logs.push(Math.log(stepFactorFor(m, i, round) / m.slowdowns[i]));
    }
    const n = logs.length;
    const mean = logs.reduce((a, b) => a + b, 0) / n;
    const variance = logs.reduce((a, b) => a + (b - mean) ** 2, 0) / (n - 1);
    expect(Math.abs(mean)).toBeLessThan(5 * (jitter / Math.sqrt(n)));
    expect(Math.abs(variance - jitter ** 2)).toBeLessThan(5 * jitter ** 2 * Math.sqrt(2 / (n - 1)));
  });

  it('gives the same value whatever the call order, and different rounds differ', () => {
    const timing = {
      jitter: 0.3,
      transient: { probability: 0.1, factor: 4 },
      slowdown: { kind: 'lognormal', sigma: 0.5 },
    };
    const clients = 8;
    const rounds = 6;
    const forward = model(timing, clients);
    const ascending: number[] = [];
    for (let i = 0; i < clients; i++)
      for (let round = 0; round < rounds; round++)
        ascending.push(stepSecondsFor(forward, i, round));
    // A fresh model, asked round-major and backwards, must rebuild every value bit for bit.
    const backward = model(timing, clients);
    const descending = new Array<number>(clients * rounds);
    for (let round = rounds - 1; round >= 0; round--) {
      for (let i = clients - 1; i >= 0; i--)
        descending[i * rounds + round] = stepSecondsFor(backward, i, round);
    }
    expect(descending).toEqual(ascending);
    for (let i = 0; i < clients; i++) {
      for (let round = 1; round < rounds; round++)
        expect(ascending[i * rounds + round]).not.toBe(ascending[i * rounds + round - 1]);
    }
  });

  it('refuses an unknown client or a negative round', () => {
    const m = model({}, 3);
    expect(() => stepSecondsFor(m, 3, 0)).toThrowError(
      expect.objectContaining({ code: 'E_TIMING_ARGUMENT' }),
    );
    expect(() => stepSecondsFor(m, 0, -1)).toThrowError(
      expect.objectContaining({ code: 'E_TIMING_ARGUMENT' }),
    );
  });
});
