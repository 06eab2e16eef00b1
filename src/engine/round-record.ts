// What a run records per round (rounds.jsonl) and per client per round (clients.jsonl).

export interface ByteCounts {
  up: number;
  down: number;
}

export interface RoundRecord {
  round: number;
  /** f(x) - f*, or null when this round was not evaluated */
  suboptimality: number | null;
  /** ||x - x*||, or null when not evaluated */
  distance: number | null;
  bytes: { payload: ByteCounts; encoded?: ByteCounts; wire?: ByteCounts };
  /** tau_i actually taken in the local-work exchange, by client id (participants only) */
  localSteps: Record<string, number>;
  /** clients whose update did not count (fastest-k, or lost) */
  dropped: number[];
  /** modelled length of the round */
  roundSeconds: number;
  /** modelled time since the run began, at the round's end */
  virtualSeconds: number;
  /** wall-clock time since the run began, at the round's end */
  wallSeconds: number;
}

export interface ClientRoundRecord {
  round: number;
  exchange: string;
  clientId: number;
  localSteps: number;
  computeSeconds: number;
  waitSeconds: number;
  transferSeconds: number;
  bytes: { payload: ByteCounts; encoded?: ByteCounts; wire?: ByteCounts };
  dropped: boolean;
}

/**
 * Where a run's records go as they happen, round by round (round 0, the initial evaluation with
 * no clients, first): a results folder's files (src/results/record-stream.ts) or a caller's own.
 */
export interface RecordSink {
  append(record: RoundRecord, clients: readonly ClientRoundRecord[]): void;
}
