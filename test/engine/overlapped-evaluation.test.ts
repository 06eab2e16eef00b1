// The coordinator lets a round's evaluation run on while the next round's first exchange goes
// out, and ends it before that round folds anything in (RunWalkSetup.overlapEvaluation). A run
// walked that way must be the run walked in order: the same records (the wall clock aside), the
// same final model bit for bit, the same stop and checkpoints, whether it runs to its last
// round, reaches its target (the next round, already under way, is thrown away), diverges, or is
// stopped between two rounds with a round's evaluation still open. Walked here in process with
// the same walk, so that every case is exact and quick.

import { readFileSync } from 'node:fs';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { ClientRuntime } from '../../src/engine/client-runtime.js';
import {
  runInProcess,
  runInProcessStoppable,
  type EngineOptions,
} from '../../src/engine/in-process-engine.js';
import type { RoundRecord } from '../../src/engine/round-record.js';
import type { RunState } from '../../src/engine/run-state.js';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { RecordList } from '../support/record-list.js';

const text = readFileSync(new URL('../../scenarios/quickstart.yaml', import.meta.url), 'utf8');

function withoutWallClock(records: readonly RoundRecord[]): unknown[] {
  return records.map(({ wallSeconds: _wall, ...rest }) => rest);
}

function bitsOf(x: Float64Array): string {
  return Buffer.from(x.buffer, x.byteOffset, x.byteLength).toString('hex');
}

function run(tweaks: string[], options: EngineOptions = {}) {
  const scenario = scenarioFromText(text, 'quickstart.yaml', tweaks);
  const records = new RecordList();
  const checkpoints: RunState[] = [];
  const outcome = runInProcess(scenario, {
    ...options,
    openRecords: () => records,
    onCheckpoint: (state) => checkpoints.push(state),
  });
  return { outcome, records, checkpoints };
}

function expectSameRun(tweaks: string[], options: EngineOptions = {}) {
  const inOrder = run(tweaks, options);
  const overlapped = run(tweaks, { ...options, overlapEvaluation: true });
  expect(overlapped.outcome.stopReason).toBe(inOrder.outcome.stopReason);
  expect(bitsOf(overlapped.outcome.finalModel)).toBe(bitsOf(inOrder.outcome.finalModel));
  expect(withoutWallClock(overlapped.records.rounds)).toEqual(
    withoutWallClock(inOrder.records.rounds),
  );
  expect(overlapped.records.clients).toEqual(inOrder.records.clients);
  expect(overlapped.checkpoints.map((c) => c.round)).toEqual(
    inOrder.checkpoints.map((c) => c.round),
  );
  return { inOrder, overlapped };
}

afterEach(() => {
  vi.restoreAllMocks();
});

describe('a run whose evaluations overlap the next round', () => {
  it('is the run walked in order when it runs to its last round', () => {
    const { inOrder } = expectSameRun(['run.rounds:12', 'run.target:0']);
    expect(inOrder.outcome.stopReason).toBe('rounds-complete');
    expect(inOrder.records.rounds).toHaveLength(13);
  });

  it('is the run walked in order with evaluations every third round and checkpoints every fourth', () => {
    const { inOrder } = expectSameRun(['run.rounds:14', 'run.target:0', 'run.evalEvery:3'], {
      checkpointEveryRounds: 4,
    });
    expect(inOrder.checkpoints.map((c) => c.round)).toEqual([4, 8, 12]);
  });

  it('ends where the run walked in order reaches its target, and throws the round under way away', () => {
    const work = vi.spyOn(ClientRuntime.prototype, 'work');
    const inOrder = run(['run.target:1e-4']);
    const inOrderWork = work.mock.calls.length;
    work.mockClear();
    const overlapped = run(['run.target:1e-4'], { overlapEvaluation: true });
    expect(inOrder.outcome.stopReason).toBe('target-reached');
    expect(overlapped.outcome.stopReason).toBe('target-reached');
    expect(bitsOf(overlapped.outcome.finalModel)).toBe(bitsOf(inOrder.outcome.finalModel));
    expect(withoutWallClock(overlapped.records.rounds)).toEqual(
      withoutWallClock(inOrder.records.rounds),
    );
    expect(overlapped.records.clients).toEqual(inOrder.records.clients);
    // The round after the target went out, and its first exchange (FedLin's gradients, one
    // per client) was worked before the evaluation ended the run; the walk in order never
    // started it. (The predicted trajectory's ideal clients work too, alike in both runs.)
    const after = inOrder.records.rounds.length;
    const workedIn = (calls: typeof work.mock.calls, round: number) =>
      calls.filter(([worked]) => worked === round).length;
    expect(work.mock.calls.length).toBe(inOrderWork + 8);
    expect(workedIn(work.mock.calls, after)).toBe(8);
  });

  it('ends where the run walked in order diverges, on the evaluation past the explosion bound', () => {
    // FedAvg at eta = 100 passes the bound on f - f* before any value stops being finite
    // (test/integration/diverged.test.ts).
    const { inOrder, overlapped } = expectSameRun([
      'method.name:fedavg',
      'method.stepSize:100',
      'run.rounds:200',
      'run.target:0',
    ]);
    expect(inOrder.outcome.stopReason).toBe('diverged');
    const last = overlapped.records.rounds.at(-1)!;
    expect(Number.isFinite(last.suboptimality)).toBe(true);
  });

  it('stopped between two rounds, ends the open evaluation first and resumes to the same end', async () => {
    const scenario = scenarioFromText(text, 'quickstart.yaml', ['run.rounds:12', 'run.target:0']);
    const plain = runInProcess(scenario);
    // openRound and closeRound each ask once a round: call 11 is openRound of round 6, asked
    // while round 5's evaluation is still open.
    let asked = 0;
    let stopped: RunState | null = null;
    const records = new RecordList();
    const first = await runInProcessStoppable(
      scenario,
      {
        overlapEvaluation: true,
        openRecords: () => records,
        onCheckpoint: (state) => (stopped = state),
      },
      () => ++asked >= 11,
    );
    expect(first.stopReason).toBe('stopped');
    const state = stopped as unknown as RunState;
    expect(state.round).toBe(5);
    expect(records.rounds.map((r) => r.round)).toEqual([0, 1, 2, 3, 4, 5]);
    expect(records.rounds[5].suboptimality).not.toBeNull();
    const resumed = runInProcess(scenario, { resume: state });
    expect(resumed.stopReason).toBe('rounds-complete');
    expect(bitsOf(resumed.finalModel)).toBe(bitsOf(plain.finalModel));
  });
});
