// A channel is one direction of traffic (uplink: client -> server; downlink: server -> client)
// with the compression policy the scenario gives it: a default compressor and per-field
// overrides. This file holds what both directions and both ends share, so that the sender and
// the receiver of a field always agree on how it travels.

import type { Rng } from '../base/rng.js';
import type { CompressorSpec, Scenario } from '../scenario/schema.js';
import { isExact } from './compressor.js';

export type ChannelSpec = Scenario['compression']['uplink'];

/**
 * The Rng for one field of one message, derived by the caller from (plan seed, round, client,
 * field), e.g. Rng.derive(seed, 'compress', round, clientId, field). Called only for rand-k
 * fields, so other channels pay nothing for it.
 */
export type RngForField = (field: string) => Rng;

/** The compressor of a field: its override, else the channel default. */
export function compressorForField(channel: ChannelSpec, field: string): CompressorSpec {
  return Object.hasOwn(channel.fields, field) ? channel.fields[field] : channel.default;
}

/** The Rng a field's compressor needs, if any. */
export function rngForSpec(
  spec: CompressorSpec,
  field: string,
  rngFor: RngForField | undefined,
): Rng | undefined {
  return spec.kind === 'rand-k' && rngFor !== undefined ? rngFor(field) : undefined;
}

/**
 * How a downlink field travels:
 * - exact: 'none' at f64, dense and lossless; nothing to keep on either end;
 * - replica: error feedback on; compressed differences against a replica both ends keep;
 * - raw: error feedback off; C(v) itself, used by the client as it arrives.
 */
export type DownlinkMode = 'exact' | 'replica' | 'raw';

export function downlinkMode(spec: CompressorSpec): DownlinkMode {
  if (isExact(spec)) return 'exact';
  return spec.errorFeedback ? 'replica' : 'raw';
}
