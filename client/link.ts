// The link model on the worker. Wall clock: before an up goes out the sender waits latency +
// bytes / uplink bandwidth, and after a down comes in the receiver waits latency + bytes /
// downlink bandwidth, so that traffic really takes the modelled time. Virtual clock: no waits;
// the modelled seconds are only reported. Bytes are payload bytes, as the models price them.

import { downlinkSecondsFor, uplinkSecondsFor, type LinkModel } from '../src/timing/links.js';
import { sleepSeconds } from './sleep.js';

export class LinkShaper {
  private readonly link: LinkModel;
  private readonly wall: boolean;

  constructor(link: LinkModel, wall: boolean) {
    this.link = link;
    this.wall = wall;
  }

  /** Waits out a down of `payloadBytes`; resolves to its link seconds. */
  async received(payloadBytes: number): Promise<number> {
    const seconds = downlinkSecondsFor(this.link, payloadBytes);
    if (this.wall) await sleepSeconds(seconds);
    return seconds;
  }

  /** Waits before sending an up of `payloadBytes`; resolves to its link seconds. */
  async beforeSend(payloadBytes: number): Promise<number> {
    const seconds = uplinkSecondsFor(this.link, payloadBytes);
    if (this.wall) await sleepSeconds(seconds);
    return seconds;
  }
}
