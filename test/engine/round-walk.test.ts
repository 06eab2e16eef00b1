// The round walk's rules where a transport answers other than "everyone, at once" (the
// coordinator's lost, late and diverged clients), driven with direct calls over the quickstart
// plan (8 clients, FedLin's two exchanges: gradient, then local work):
// - a client missing from one exchange is dropped there and sits out the rest of the round;
// - fastest-k counts every update that came back when fewer than k did;
// - a client's non-finite update stops the run after recording and evaluating that round;
// - so does a finite upload past the explosion bound (one 1e300 upload), unaggregated, and a
//   model or f - f* past it;
// - a transport's stop before or after a round ends the run with its reason.

import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { planFor } from '../../src/engine/in-process-engine.js';
import { ClientRuntime, type EncodedFields } from '../../src/engine/client-runtime.js';
import { DirectTransport } from '../../src/engine/direct-transport.js';
import { evaluateModel, type Evaluation, type RoundEvaluation } from '../../src/engine/evaluate.js';
import { ServerRuntime } from '../../src/engine/server-runtime.js';
import { walkRun, walkSetup } from '../../src/engine/round-walk.js';
import { RecordList } from '../support/record-list.js';
import type { StopReason } from '../../src/engine/run-summary.js';
import {
  driveSync,
  type ClientReturn,
  type ExchangeOrder,
  type ExchangeReply,
  type RoundTransport,
  type WalkPoint,
} from '../../src/engine/walk-transport.js';

const text = readFileSync(new URL('../../scenarios/quickstart.yaml', import.meta.url), 'utf8');

interface Script {
  /** per (round, exchange), clients whose up does not come back */
  missing?: (round: number, exchange: string) => readonly number[];
  /** per (round, exchange), clients whose update comes back not finite */
  notFinite?: (round: number, exchange: string) => readonly number[];
  /** replaces what came back from a client */
  upload?: (round: number, exchange: string, returned: ClientReturn) => ClientReturn;
  openRound?: (round: number) => StopReason | null;
  closeRound?: (round: number) => StopReason | null;
}

/** Direct calls, with the answers a network can give scripted in. */
class ScriptedTransport extends DirectTransport implements RoundTransport {
  readonly orders: ExchangeOrder[] = [];
  /** the rounds after which the walk asked for a checkpoint */
  readonly checkpoints: number[] = [];
  private readonly script: Script;
  private readonly evaluateModel: (x: Float64Array) => Evaluation;

  constructor(clients: ClientRuntime[], evaluate: (x: Float64Array) => Evaluation, script: Script) {
    super(clients);
    this.evaluateModel = evaluate;
    this.script = script;
  }

  override exchange(order: ExchangeOrder): ExchangeReply {
    this.orders.push(order);
    const reply = super.exchange(order);
    const returns = new Map(reply.returns);
    for (const [id, returned] of returns)
      returns.set(id, this.script.upload?.(order.round, order.exchange, returned) ?? returned);
    for (const id of this.script.missing?.(order.round, order.exchange) ?? [])
      returns.set(id, { kind: 'missing' });
    for (const id of this.script.notFinite?.(order.round, order.exchange) ?? [])
      returns.set(id, { kind: 'not-finite' });
    return { returns };
  }

  openRound(round: number): StopReason | null {
    return this.script.openRound?.(round) ?? null;
  }

  closeRound(round: number): StopReason | null {
    return this.script.closeRound?.(round) ?? null;
  }

  evaluate(model: Float64Array): RoundEvaluation {
    return { ...this.evaluateModel(model), predictedSuboptimality: null, heldOut: null };
  }

  checkpoint(point: WalkPoint): void {
    this.checkpoints.push(point.round);
  }
}

function walk(tweaks: string[], script: Script, checkpointEveryRounds = 0) {
  const { plan, theory } = planFor(
    scenarioFromText(text, 'quickstart.yaml', ['run.target:0', ...tweaks]),
  );
  const clients = theory.instance.objectives.map(
    (objective, id) => new ClientRuntime(plan, id, objective),
  );
  const transport = new ScriptedTransport(
    clients,
    (x) => evaluateModel(theory.instance.global, theory.optimum.x, theory.optimum.loss, x),
    script,
  );
  const records = new RecordList();
  const end = driveSync(
    walkRun({
      ...walkSetup(plan, new ServerRuntime(plan)),
      wallSeconds: () => 0,
      onRound: (record, clientRecords) => records.append(record, clientRecords),
      checkpointEveryRounds,
    }),
    transport,
  );
  return {
    walked: { ...end, rounds: records.rounds, clients: records.clients },
    orders: transport.orders,
    checkpoints: transport.checkpoints,
  };
}

const idsOf = (order: ExchangeOrder) => order.downs.map((d) => d.assignment.clientId);

describe('walkRun', () => {
  it('drops a client missing from the gradient exchange and leaves it out of the local one', () => {
    const { walked, orders } = walk(['run.rounds:2'], {
      missing: (round, exchange) => (round === 1 && exchange === 'gradient' ? [2] : []),
    });
    expect(orders.map((o) => [o.round, o.exchange, idsOf(o)])).toEqual([
      [1, 'gradient', [0, 1, 2, 3, 4, 5, 6, 7]],
      [1, 'local', [0, 1, 3, 4, 5, 6, 7]],
      [2, 'gradient', [0, 1, 2, 3, 4, 5, 6, 7]],
      [2, 'local', [0, 1, 2, 3, 4, 5, 6, 7]],
    ]);
    const [, first, second] = walked.rounds;
    expect(first.dropped).toEqual([2]);
    expect(Object.keys(first.localSteps)).toEqual(['0', '1', '3', '4', '5', '6', '7']);
    const missed = walked.clients.find(
      (c) => c.round === 1 && c.exchange === 'gradient' && c.clientId === 2,
    )!;
    expect(missed).toMatchObject({
      dropped: true,
      computeSeconds: 0,
      waitSeconds: 0,
      transferSeconds: 0,
      bytes: { payload: { up: 0 } },
    });
    expect(second.dropped).toEqual([]);
    expect(walked.stopReason).toBe('rounds-complete');
  });

  it('counts every update that came back when fewer than fastest-k did', () => {
    // participation 0.5: 4 per round, k = 4; one lost leaves 3, and all 3 count.
    const tweaks = [
      'run.rounds:1',
      'method.name:fedavg',
      'method.participation:0.5',
      'timing.policy:{kind: fastest-k, k: 4}',
    ];
    const { walked, orders } = walk(tweaks, {});
    const members = idsOf(orders[0]);
    expect(members).toHaveLength(4);
    const lost = members[1];
    const again = walk(tweaks, { missing: () => [lost] });
    expect(walked.rounds[1].dropped).toEqual([]);
    expect(again.walked.rounds[1].dropped).toEqual([lost]);
    const counted = again.walked.clients.filter((c) => !c.dropped).map((c) => c.clientId);
    expect(counted).toEqual(members.filter((id) => id !== lost));
  });

  it('stops as diverged after recording and evaluating the round where a client diverged', () => {
    const { walked, orders } = walk(['run.rounds:5', 'run.evalEvery:10'], {
      notFinite: (round, exchange) => (round === 2 && exchange === 'gradient' ? [3] : []),
    });
    expect(walked.stopReason).toBe('diverged');
    expect(walked.rounds.map((r) => r.round)).toEqual([0, 1, 2]);
    expect(walked.rounds[1].suboptimality).toBeNull();
    expect(walked.rounds[2].suboptimality).not.toBeNull();
    // the local exchange of round 2 never started
    expect(orders.map((o) => `${o.round} ${o.exchange}`)).toEqual([
      '1 gradient',
      '1 local',
      '2 gradient',
    ]);
    // every client of the exchange is recorded; the one whose update was not finite did not count
    const exchange = walked.clients.filter((c) => c.round === 2);
    expect(exchange.map((c) => c.clientId)).toEqual([0, 1, 2, 3, 4, 5, 6, 7]);
    expect(exchange.filter((c) => c.dropped).map((c) => c.clientId)).toEqual([3]);
  });

  it('stops as diverged in the round of one finite 1e300 upload, which is never aggregated', () => {
    // 1e300: finite, below float64's largest (about 1.8e308), its square overflows (IEEE 754).
    const tweaks = ['method.name:fedavg', 'run.evalEvery:10'];
    const huge = (returned: ClientReturn): ClientReturn => {
      if (returned.kind !== 'up') return returned;
      const encodedUp: EncodedFields = {};
      for (const [name, cv] of Object.entries(returned.encodedUp))
        encodedUp[name] = { ...cv, values: new Float64Array(cv.values.length).fill(1e300) };
      return { ...returned, encodedUp };
    };
    const { walked } = walk(['run.rounds:5', ...tweaks], {
      upload: (round, _exchange, returned) => (round === 2 ? huge(returned) : returned),
    });
    expect(walked.stopReason).toBe('diverged');
    expect(walked.rounds.map((r) => r.round)).toEqual([0, 1, 2]);
    // the model stays round 1's, bit for bit, and its f - f* (evaluated: the last round) finite
    const clean = walk(['run.rounds:1', ...tweaks], {});
    expect(Buffer.from(walked.finalModel.buffer)).toEqual(
      Buffer.from(clean.walked.finalModel.buffer),
    );
    expect(walked.rounds[2].suboptimality).toBe(clean.walked.rounds[1].suboptimality);
  });

  it('ends where its transport stops it, before or after a round', () => {
    const before = walk(['run.rounds:5'], {
      openRound: (round) => (round === 3 ? 'stopped' : null),
    });
    expect(before.walked.stopReason).toBe('stopped');
    expect(before.walked.rounds.map((r) => r.round)).toEqual([0, 1, 2]);
    const after = walk(['run.rounds:5', 'run.evalEvery:10'], {
      closeRound: (round) => (round === 2 ? 'workers-lost' : null),
    });
    expect(after.walked.stopReason).toBe('workers-lost');
    expect(after.walked.rounds.map((r) => r.round)).toEqual([0, 1, 2]);
    expect(after.walked.rounds[2].suboptimality).not.toBeNull();
  });

  it('asks for a checkpoint every N rounds but after the last, and after the round a stop ended', () => {
    const periodic = walk(['run.rounds:7'], {}, 3);
    expect(periodic.checkpoints).toEqual([3, 6]);
    const never = walk(['run.rounds:7'], {});
    expect(never.checkpoints).toEqual([]);
    const closed = walk(['run.rounds:7', 'run.evalEvery:2'], {
      closeRound: (round) => (round === 5 ? 'stopped' : null),
    });
    expect(closed.checkpoints).toEqual([5]);
    // a stopped round is recorded as an unstopped run records it: round 5 is not evaluated
    expect(closed.walked.rounds[5].suboptimality).toBeNull();
    const opened = walk(
      ['run.rounds:7'],
      { openRound: (round) => (round === 4 ? 'stopped' : null) },
      2,
    );
    expect(opened.checkpoints).toEqual([2, 3]);
    const lost = walk(['run.rounds:7'], {
      closeRound: (round) => (round === 2 ? 'workers-lost' : null),
    });
    expect(lost.checkpoints).toEqual([]);
  });
});
