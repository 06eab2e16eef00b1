// Which fields of an exchange's downs every client receives alike, so that they travel once per
// worker frame (the common section) and are encoded once per exchange. Decided by content: the
// round walk encodes each client's down against that client's own replicas
// (ServerRuntime.encodeDown), so even an uncompressed broadcast arrives here as one copy per
// client, and with compression two clients' downs agree exactly when their replicas do.
// Comparing the encoded vectors byte for byte (a memcmp, far cheaper than the encoding they
// save) sends once exactly what would have been sent once per client, and nothing else: a
// field that differs for any client travels in every entry.

import type { CompressedVector } from '../src/compress/compressed-vector.js';
import type { ExchangeDown } from '../src/engine/walk-transport.js';

function bytesOf(array: Uint8Array | Uint32Array | Float32Array | Float64Array): Buffer {
  return Buffer.from(array.buffer, array.byteOffset, array.byteLength);
}

/** Same dimension, same indices, same values bit for bit (-0 and 0 differ), same width. */
export function sameVector(a: CompressedVector, b: CompressedVector): boolean {
  if (a === b) return true;
  if (a.dim !== b.dim || a.values.constructor !== b.values.constructor) return false;
  if ((a.indices === null) !== (b.indices === null)) return false;
  if (a.indices !== null && !bytesOf(a.indices).equals(bytesOf(b.indices!))) return false;
  return bytesOf(a.values).equals(bytesOf(b.values));
}

/** The fields whose vector is the same in every down of the exchange. */
export function sharedFields(downs: readonly ExchangeDown[]): Set<string> {
  const shared = new Set<string>();
  if (downs.length === 0) return shared;
  const first = downs[0].encodedDown;
  for (const [name, vector] of Object.entries(first)) {
    if (
      downs.every(
        (d) => d.encodedDown[name] !== undefined && sameVector(d.encodedDown[name], vector),
      )
    )
      shared.add(name);
  }
  return shared;
}
