// One exchange settled once its ups are back: the round policy decides tau_i, drops and seconds
// over the clients whose up came back (decideRound, in ascending client id), every client sent
// a down gets a record, and the uploads that count go on to aggregation. Transfers are priced on
// the wire bytes of each client's own frames (own-frame-bytes.ts says why), the same in every
// runtime.

import { fieldsPayloadBytes } from '../compress/payload-bytes.js';
import {
  decideRound,
  policyForUpdates,
  type ParticipantTiming,
  type RoundParticipant,
  type RoundTiming,
} from '../timing/round-policy.js';
import { ownDownFrameBytes, ownUpFrameBytes } from './own-frame-bytes.js';
import type { ClientRoundRecord } from './round-record.js';
import type { RunPlan } from './run-plan.js';
import type { EncodedUpload } from './server-runtime.js';
import type { ByteLayer, ClientReturn, ExchangeOrder, ExchangeReply } from './walk-transport.js';

export interface SettledExchange {
  /** one per down, in ascending client id */
  records: ClientRoundRecord[];
  /** the uploads that count */
  uploads: EncodedUpload[];
  /** the exchange's modelled length */
  roundSeconds: number;
  /** clients whose up did not come back: they sit out the rest of the round */
  missing: number[];
}

export function settleExchange(
  plan: RunPlan,
  order: ExchangeOrder,
  exchangeIndex: number,
  reply: ExchangeReply,
  byteLayers: readonly ByteLayer[],
): SettledExchange {
  const { timing } = plan.scenario;
  const deadlineSeconds = timing.policy.kind === 'deadline' ? timing.policy.budgetSeconds : null;
  const ups = new Map<
    number,
    { up: Extract<ClientReturn, { kind: 'up' }>; payloadBytes: number }
  >();
  const inputs: RoundParticipant[] = [];
  for (const down of order.downs) {
    const a = down.assignment;
    const returned = reply.returns.get(a.clientId);
    if (returned?.kind !== 'up') continue;
    ups.set(a.clientId, { up: returned, payloadBytes: fieldsPayloadBytes(returned.encodedUp) });
    inputs.push({
      clientId: a.clientId,
      stepSeconds: a.stepSeconds,
      plannedSteps: a.localSteps,
      stepsTaken: returned.stepsTaken,
      downBytes: ownDownFrameBytes(
        order.round,
        exchangeIndex,
        deadlineSeconds,
        a,
        down.encodedDown,
      ),
      upBytes: ownUpFrameBytes(
        order.round,
        exchangeIndex,
        a.clientId,
        returned.stepsTaken,
        returned.encodedUp,
      ),
      link: plan.links[a.clientId],
    });
  }
  const decided: RoundTiming =
    inputs.length === 0
      ? { participants: [], roundSeconds: 0 }
      : decideRound(policyForUpdates(timing.policy, inputs.length), inputs);
  const timingOf = new Map<number, ParticipantTiming>(
    decided.participants.map((t) => [t.clientId, t]),
  );

  const records: ClientRoundRecord[] = [];
  const uploads: EncodedUpload[] = [];
  const missing: number[] = [];
  for (const down of order.downs) {
    const a = down.assignment;
    const arrived = ups.get(a.clientId);
    const t = timingOf.get(a.clientId);
    const counted = t !== undefined && !t.dropped;
    const record: ClientRoundRecord = {
      round: order.round,
      exchange: order.exchange,
      clientId: a.clientId,
      localSteps: t?.localSteps ?? a.localSteps,
      computeSeconds: 0,
      waitSeconds: 0,
      transferSeconds: 0,
      bytes: { payload: { up: arrived?.payloadBytes ?? 0, down: down.payloadBytes } },
      dropped: !counted,
    };
    const layers = reply.returns.get(a.clientId)?.layers;
    for (const layer of byteLayers)
      record.bytes[layer] = { ...(layers?.[layer] ?? { up: 0, down: 0 }) };
    if (arrived !== undefined && t !== undefined) {
      const measured = arrived.up.measured;
      record.computeSeconds = measured?.computeSeconds ?? t.computeSeconds;
      record.transferSeconds = measured?.transferSeconds ?? t.downSeconds + t.upSeconds;
      record.waitSeconds = measured?.waitSeconds ?? t.waitSeconds;
      if (measured !== undefined) record.upStreamSeconds = measured.upStreamSeconds;
      if (counted)
        uploads.push({
          clientId: a.clientId,
          stepsTaken: arrived.up.stepsTaken,
          stepSize: a.stepSize,
          encodedUp: arrived.up.encodedUp,
        });
    } else {
      missing.push(a.clientId);
    }
    records.push(record);
  }
  return { records, uploads, roundSeconds: decided.roundSeconds, missing };
}
