// A run stopped after round r and resumed from its checkpoint (restored into fresh runtimes, the
// checkpoint passed through its file format) must go on exactly as the run that never stopped:
// the same final model bit for bit and the same records after r (the wall clock aside). The
// cells cover every method with the states that cross rounds: error-feedback memories and
// replicas on both channels (top-k), seeded sparsification (rand-k), partial participation and
// minibatch samplers.

import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { runInProcess } from '../../src/engine/in-process-engine.js';
import type { RunState } from '../../src/engine/run-state.js';
import type { RoundRecord } from '../../src/engine/round-record.js';
import { decodeCheckpoint, encodeCheckpoint } from '../../src/results/checkpoint-file.js';
import { RecordList } from '../support/record-list.js';

const text = readFileSync(new URL('../../scenarios/quickstart.yaml', import.meta.url), 'utf8');

const METHODS = ['gd', 'fedavg', 'fedprox', 'fednova', 'scaffold', 'fedlin', 'fedsplit'] as const;

const COMPRESSIONS = {
  'top-k with error feedback on both channels': [
    'compression.uplink.default:{kind: top-k, fraction: 0.25, errorFeedback: true}',
    'compression.downlink.default:{kind: top-k, fraction: 0.5, errorFeedback: true}',
  ],
  'rand-k': [
    'compression.uplink.default:{kind: rand-k, fraction: 0.3, unbiased: true, errorFeedback: true}',
    'compression.downlink.default:{kind: rand-k, fraction: 0.5}',
  ],
} as const;

const ROUNDS = 9;
const CHECKPOINT_EVERY = 3;

function withoutWallClock(records: readonly RoundRecord[]): unknown[] {
  return records.map(({ wallSeconds: _wall, ...rest }) => rest);
}

function bitsOf(x: Float64Array): string {
  return Buffer.from(x.buffer, x.byteOffset, x.byteLength).toString('hex');
}

describe(`resuming from a checkpoint continues the run bit for bit (${ROUNDS} rounds)`, () => {
  for (const method of METHODS) {
    for (const [compression, tweaks] of Object.entries(COMPRESSIONS)) {
      it(`${method}, ${compression}, participation 0.5, minibatch`, () => {
        const scenario = scenarioFromText(text, 'quickstart.yaml', [
          `method.name:${method}`,
          'method.participation:0.5',
          'method.gradient:{minibatch: 16}',
          `run.rounds:${ROUNDS}`,
          'run.target:0',
          'run.evalEvery:2',
          'timing.slowdown:{kind: lognormal, sigma: 0.5}',
          'timing.jitter:0.3',
          ...tweaks,
        ]);
        const plain = runInProcess(scenario);
        const whole = new RecordList();
        const states = new Map<number, RunState>();
        const checkpointed = runInProcess(scenario, {
          openRecords: () => whole,
          checkpointEveryRounds: CHECKPOINT_EVERY,
          onCheckpoint: (state) => states.set(state.round, state),
        });
        // Taking checkpoints changes nothing.
        expect(bitsOf(checkpointed.finalModel)).toBe(bitsOf(plain.finalModel));
        expect([...states.keys()]).toEqual([3, 6]);

        for (const [round, state] of states) {
          const bytes = encodeCheckpoint({ state, records: { roundsBytes: 0, clientsBytes: 0 } });
          const restored = decodeCheckpoint(bytes, state.planHash, 'checkpoint.bin').state;
          const rest = new RecordList();
          const resumed = runInProcess(scenario, { resume: restored, openRecords: () => rest });
          expect(bitsOf(resumed.finalModel), `resumed after round ${round}`).toBe(
            bitsOf(plain.finalModel),
          );
          expect(withoutWallClock(rest.rounds)).toEqual(
            withoutWallClock(whole.rounds.filter((r) => r.round > round)),
          );
          expect(rest.clients).toEqual(whole.clients.filter((c) => c.round > round));
          expect(rest.rounds[0].round).toBe(round + 1);
        }
      });
    }
  }
});

describe('a stopped in-process run', () => {
  it('hands over its state after the round in progress, and that state resumes to the same end', async () => {
    const { runInProcessStoppable } = await import('../../src/engine/in-process-engine.js');
    const scenario = scenarioFromText(text, 'quickstart.yaml', ['run.rounds:12', 'run.target:0']);
    const plain = runInProcess(scenario);
    let stop = false;
    let stopped: RunState | null = null;
    const first = await runInProcessStoppable(
      scenario,
      {
        onRound: (record) => {
          if (record.round === 5) stop = true;
        },
        onCheckpoint: (state) => (stopped = state),
      },
      () => stop,
    );
    expect(first.stopReason).toBe('stopped');
    expect(stopped).not.toBeNull();
    const state = stopped as unknown as RunState;
    // The stop asked during round 5 ends the run after round 5 (closeRound), not before it.
    expect(state.round).toBe(5);
    const resumed = runInProcess(scenario, { resume: state });
    expect(resumed.stopReason).toBe('rounds-complete');
    expect(bitsOf(resumed.finalModel)).toBe(bitsOf(plain.finalModel));
  });
});
