// Every client's state as the coordinator knows it, one byte per client, for the live view's
// tiles. The round driver and the coordinator write it as things happen (cheap: a byte store);
// the live view reads it on its own timer, so that the rounds never wait for a viewer.
//
//   idle       not in the exchange under way (partial participation), or before the first
//   sending    its down is queued for its worker's socket, not yet written out
//   computing  its down went out and its up has not come back (local work and the uplink)
//   waiting    its up came; it waits for the exchange to close
//   dropped    the exchange closed without its up (too slow for fastest-k, past a deadline)
//   lost       its worker is lost or away; it takes no part until the worker resumes

export const CLIENT_STATES = [
  'idle',
  'sending',
  'computing',
  'waiting',
  'dropped',
  'lost',
] as const;
export type ClientState = (typeof CLIENT_STATES)[number];

const CODE_OF: Readonly<Record<ClientState, number>> = Object.fromEntries(
  CLIENT_STATES.map((state, code) => [state, code]),
) as Record<ClientState, number>;
const LOST = CODE_OF.lost;
/** '0' + code: the board travels as a string of digits, one per client. */
const DIGIT_ZERO = 48;

export class ClientBoard {
  private readonly codes: Uint8Array;
  private changed = true;

  constructor(clientCount: number) {
    this.codes = new Uint8Array(clientCount);
  }

  /** An exchange starts: its clients' downs are being sent; every other client still in the run is idle. */
  exchangeStarted(clientIds: readonly number[]): void {
    for (let id = 0; id < this.codes.length; id++)
      if (this.codes[id] !== LOST) this.codes[id] = CODE_OF.idle;
    this.setMany(clientIds, 'sending');
  }

  /** Sets `state` for a client still in the run (a lost client stays lost until `rejoined`). */
  set(clientId: number, state: ClientState): void {
    if (this.codes[clientId] === LOST) return;
    this.codes[clientId] = CODE_OF[state];
    this.changed = true;
  }

  setMany(clientIds: Iterable<number>, state: ClientState): void {
    for (const id of clientIds) this.set(id, state);
  }

  /** Their downs were written out: clients still sending are computing (an up may have come first). */
  written(clientIds: Iterable<number>): void {
    for (const id of clientIds) if (this.codes[id] === CODE_OF.sending) this.set(id, 'computing');
  }

  lost(clientIds: Iterable<number>): void {
    for (const id of clientIds) this.codes[id] = LOST;
    this.changed = true;
  }

  /** Clients of a resumed worker: idle until their next exchange. */
  rejoined(clientIds: Iterable<number>): void {
    for (const id of clientIds) this.codes[id] = CODE_OF.idle;
    this.changed = true;
  }

  /** The board as digits (CLIENT_STATES' indices), one per client in id order. */
  digits(): string {
    const text = Buffer.allocUnsafe(this.codes.length);
    for (let id = 0; id < this.codes.length; id++) text[id] = DIGIT_ZERO + this.codes[id];
    return text.toString('latin1');
  }

  /** The board's digits when it changed since the last call, else null. */
  takeChange(): string | null {
    if (!this.changed) return null;
    this.changed = false;
    return this.digits();
  }
}
