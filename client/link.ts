// The link model on the worker, each client on its own link (src/timing/links.ts). Wall clock:
// before an up goes out the sender waits latency + bytes / uplink bandwidth, and after a down
// comes in the receiver waits latency + bytes / downlink bandwidth, so that traffic really takes
// the modelled time. Virtual clock: no waits; the modelled seconds are only reported. Bytes are
// those of the client's own frame, as the round walk prices them (src/engine/own-frame-bytes.ts).

import { downlinkSecondsFor, uplinkSecondsFor, type ClientLink } from '../src/timing/links.js';
import { sleepSeconds } from './sleep.js';

export class LinkShaper {
  /** by client id */
  private readonly links: readonly ClientLink[];
  private readonly wall: boolean;

  constructor(links: readonly ClientLink[], wall: boolean) {
    this.links = links;
    this.wall = wall;
  }

  /** Waits out client `clientId`'s down of `bytes`; resolves to its link seconds. */
  async received(clientId: number, bytes: number): Promise<number> {
    const seconds = downlinkSecondsFor(this.links[clientId], bytes);
    if (this.wall) await sleepSeconds(seconds);
    return seconds;
  }

  /** Waits before client `clientId` sends an up of `bytes`; resolves to its link seconds. */
  async beforeSend(clientId: number, bytes: number): Promise<number> {
    const seconds = uplinkSecondsFor(this.links[clientId], bytes);
    if (this.wall) await sleepSeconds(seconds);
    return seconds;
  }
}
