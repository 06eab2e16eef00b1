import { describe, expect, it } from 'vitest';
import { timingSchema } from '../../src/scenario/schema.js';
import { TimingError } from '../../src/timing/errors.js';
import type { ClientLink } from '../../src/timing/links.js';
import { participantsFor } from '../../src/timing/participation.js';
import {
  decideRound,
  type RoundParticipant,
  type RoundPolicy,
} from '../../src/timing/round-policy.js';
import { speedModelFor, stepSecondsFor } from '../../src/timing/round-speed.js';

// Expected values follow from the policies' definitions (src/timing/round-policy.ts, the timing
// section of DESIGN.md); the hand-worked cases use powers of two so that they are exact.

/** 1024 bytes/s each way and 0.25 s latency: 1024 bytes take 1.25 s, 512 bytes 0.75 s. */
const slowLink: ClientLink = {
  uplinkBytesPerSecond: 1024,
  downlinkBytesPerSecond: 1024,
  latencySeconds: 0.25,
};
/** No transfer time at all when messages are empty. */
const freeLink: ClientLink = {
  uplinkBytesPerSecond: 1e9,
  downlinkBytesPerSecond: 1e9,
  latencySeconds: 0,
};

/** Every participant on the same link. */
function decide(
  policy: RoundPolicy,
  link: ClientLink,
  participants: readonly Omit<RoundParticipant, 'link'>[],
) {
  return decideRound(
    policy,
    participants.map((p) => ({ ...p, link })),
  );
}

function participant(
  clientId: number,
  stepSeconds: number,
  plannedSteps: number,
  downBytes = 0,
  upBytes = 0,
): Omit<RoundParticipant, 'link'> {
  return { clientId, stepSeconds, plannedSteps, downBytes, upBytes };
}

describe('decideRound: all', () => {
  it('runs planned steps and ends with the last arrival; the others wait for it', () => {
    const participants = [
      participant(0, 0.25, 4, 1024, 512),
      participant(2, 0.5, 2, 1024, 512),
      participant(5, 1, 3, 1024, 512),
    ];
    const timing = decide({ kind: 'all' }, slowLink, participants);
    // finish = 1.25 down + tau step + 0.75 up = [3, 3, 5]
    expect(timing.roundSeconds).toBe(5);
    expect(timing.participants.map((p) => p.localSteps)).toEqual([4, 2, 3]);
    expect(timing.participants.map((p) => p.computeSeconds)).toEqual([1, 1, 3]);
    expect(timing.participants.map((p) => p.downSeconds)).toEqual([1.25, 1.25, 1.25]);
    expect(timing.participants.map((p) => p.upSeconds)).toEqual([0.75, 0.75, 0.75]);
    expect(timing.participants.map((p) => p.finishSeconds)).toEqual([3, 3, 5]);
    expect(timing.participants.map((p) => p.waitSeconds)).toEqual([2, 2, 0]);
    expect(timing.participants.map((p) => p.clientId)).toEqual([0, 2, 5]);
    expect(timing.participants.some((p) => p.dropped)).toBe(false);
  });
});

describe('decideRound: deadline', () => {
  it('fits floor(budget / step) steps of compute, at least 1 and at most stepsMax', () => {
    const policy: RoundPolicy = { kind: 'deadline', budgetSeconds: 10, stepsMax: 16 };
    // the budget is compute only (the design's tau_i = max(1, floor(budget / step time)));
    // transfer (1.25 + 0.75 = 2 s here) lengthens the round but does not shrink tau_i
    const participants = [
      participant(0, 1, 99, 1024, 512), // 10 steps
      participant(1, 3, 99, 1024, 512), // floor(10/3) = 3
      participant(2, 100, 99, 1024, 512), // none fit: 1
      participant(3, 0.0625, 99, 1024, 512), // 160 fit: capped at 16
    ];
    const timing = decide(policy, slowLink, participants);
    expect(timing.participants.map((p) => p.localSteps)).toEqual([10, 3, 1, 16]);
    // The slow client's single step overruns the budget; the round waits for it.
    expect(timing.roundSeconds).toBe(2 + 100);
    expect(timing.participants.some((p) => p.dropped)).toBe(false);
  });

  it('stays within [1, stepsMax] for step times across six orders of magnitude', () => {
    const stepsMax = 50;
    const policy: RoundPolicy = { kind: 'deadline', budgetSeconds: 1, stepsMax };
    const participants = Array.from({ length: 60 }, (_, i) =>
      participant(i, 10 ** (-4 + i / 10), 1, 1024, 512),
    );
    for (const p of decide(policy, slowLink, participants).participants) {
      expect(p.localSteps).toBeGreaterThanOrEqual(1);
      expect(p.localSteps).toBeLessThanOrEqual(stepsMax);
    }
  });

  it('counts a budget that holds a whole number of decimal steps as that number', () => {
    // 0.3 / 0.1 is 2.9999999999999996 in binary floating point; three 0.1 s steps fit 0.3 s.
    const timing = decide({ kind: 'deadline', budgetSeconds: 0.3, stepsMax: 100 }, freeLink, [
      participant(0, 0.1, 1),
    ]);
    expect(timing.participants[0].localSteps).toBe(3);
  });

  it("gives two-class stragglers about 1/F of the others' steps", () => {
    const m = 40;
    const factor = 4;
    const timing = timingSchema.parse({
      stepCostSeconds: 0.001,
      slowdown: { kind: 'two-class', fraction: 0.25, factor },
      policy: { kind: 'deadline', budgetSeconds: 0.105, stepsMax: 1000 },
      links: freeLink,
    });
    const speed = speedModelFor(timing, m, 17);
    const ids = participantsFor(1, m, 17, 0);
    const participants = Array.from(ids, (id) => participant(id, stepSecondsFor(speed, id, 0), 1));
    const decided = decide(timing.policy, freeLink, participants);
    const slow = decided.participants.filter((p) => speed.slowdowns[p.clientId] === factor);
    const fast = decided.participants.filter((p) => speed.slowdowns[p.clientId] === 1);
    // exactly round(0.25 * 40) = 10 stragglers
    expect(slow.length).toBe(10);
    expect(fast.length).toBe(30);
    // 0.105 s of 1 ms steps: 105 steps; of 4 ms steps: floor(26.25) = 26. In general
    // floor(x / F) and floor(x) / F differ by less than 1 (the floors drop different
    // fractional parts), so the stragglers' count is within one step of 1/F of the others'.
    for (const p of fast) expect(p.localSteps).toBe(105);
    for (const p of slow) {
      expect(p.localSteps).toBe(26);
      expect(Math.abs(p.localSteps - 105 / factor)).toBeLessThan(1);
    }
  });
});

describe('decideRound: fastest-k', () => {
  it('drops exactly m - k per round, the slowest ones', () => {
    const m = 20;
    const k = 15;
    const timing = timingSchema.parse({
      slowdown: { kind: 'lognormal', sigma: 1 },
      jitter: 0.5,
      policy: { kind: 'fastest-k', k },
    });
    const speed = speedModelFor(timing, m, 23);
    for (let round = 0; round < 10; round++) {
      const participants = Array.from({ length: m }, (_, id) =>
        participant(id, stepSecondsFor(speed, id, round), 1 + (id % 4), 4096, 4096),
      );
      const decided = decide(timing.policy, freeLink, participants);
      const dropped = decided.participants.filter((p) => p.dropped);
      const counted = decided.participants.filter((p) => !p.dropped);
      expect(dropped.length).toBe(m - k);
      const lastCounted = Math.max(...counted.map((p) => p.finishSeconds));
      expect(decided.roundSeconds).toBe(lastCounted);
      for (const p of dropped) {
        expect(p.finishSeconds).toBeGreaterThanOrEqual(lastCounted);
        expect(p.waitSeconds).toBe(0);
      }
      for (const p of counted) expect(p.waitSeconds).toBe(decided.roundSeconds - p.finishSeconds);
      // Everyone ran its planned steps.
      for (const p of decided.participants) expect(p.localSteps).toBe(1 + (p.clientId % 4));
    }
  });

  it('breaks equal finish times toward the lower client id', () => {
    // finishes: id 3 -> 2 s, id 5 -> 1 s, id 8 -> 2 s, id 9 -> 2 s; k = 2 keeps 5 and then 3.
    const participants = [
      participant(3, 1, 2),
      participant(5, 1, 1),
      participant(8, 0.5, 4),
      participant(9, 2, 1),
    ];
    const decided = decide({ kind: 'fastest-k', k: 2 }, freeLink, participants);
    expect(decided.participants.map((p) => p.dropped)).toEqual([false, false, true, true]);
    expect(decided.roundSeconds).toBe(2);
  });

  it('refuses k above the number of participants, naming timing.policy.k', () => {
    expect(() =>
      decide({ kind: 'fastest-k', k: 3 }, freeLink, [participant(0, 1, 1), participant(1, 1, 1)]),
    ).toThrowError(
      expect.objectContaining({ code: 'E_TIMING_POLICY_K', fieldPath: 'timing.policy.k' }),
    );
  });
});

describe('decideRound: inputs', () => {
  it('refuses no participants, unsorted ids and a non-positive step time', () => {
    const expectArgumentError = (participants: Omit<RoundParticipant, 'link'>[]) => {
      let caught: unknown = null;
      try {
        decide({ kind: 'all' }, freeLink, participants);
      } catch (error) {
        caught = error;
      }
      expect(caught).toBeInstanceOf(TimingError);
      expect(caught).toMatchObject({ code: 'E_TIMING_ARGUMENT' });
    };
    expectArgumentError([]);
    expectArgumentError([participant(2, 1, 1), participant(1, 1, 1)]);
    expectArgumentError([participant(1, 1, 1), participant(1, 1, 1)]);
    expectArgumentError([participant(0, 0, 1)]);
  });
});
