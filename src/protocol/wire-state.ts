// A runtime's state in a state message: the state tree (src/base/state-tree.ts) as JSON text and
// its vectors as little-endian float64 bytes. Reading one checks the text, the references and
// the byte count, each with a protocol code; whether the state fits the receiver's client is the
// receiver's check (ClientRuntime.restoreChecked, checkClientSnapshot).

import {
  flattenState,
  packVectors,
  rebuildState,
  StateTreeError,
  unpackVectors,
} from '../base/state-tree.js';
import { ProtocolError } from './errors.js';
import type { StateMessage } from './messages.js';

/** The tree and vectors of a state message for `value`. */
export function toWireState(value: unknown): Pick<StateMessage, 'tree' | 'vectors'> {
  const flat = flattenState(value);
  return {
    tree: JSON.stringify({ tree: flat.tree, lengths: flat.vectors.map((v) => v.length) }),
    vectors: packVectors(flat.vectors),
  };
}

/** The state a message carries, rebuilt; throws ProtocolError (E_TYPE, E_DIMENSION). */
export function fromWireState(message: Pick<StateMessage, 'tree' | 'vectors'>): unknown {
  let parsed: unknown;
  try {
    parsed = JSON.parse(message.tree);
  } catch {
    throw new ProtocolError('E_TYPE', 'state.tree: not JSON text');
  }
  const { tree, lengths } = (parsed ?? {}) as { tree?: unknown; lengths?: unknown };
  if (
    !Array.isArray(lengths) ||
    !lengths.every((l) => Number.isSafeInteger(l) && (l as number) >= 0)
  )
    throw new ProtocolError('E_TYPE', 'state.tree.lengths: expected a list of vector lengths');
  try {
    const vectors = unpackVectors(message.vectors, lengths as number[]);
    return rebuildState({ tree: tree as never, vectors });
  } catch (error) {
    if (error instanceof StateTreeError)
      throw new ProtocolError('E_TYPE', `state.tree: ${error.message}`);
    throw error;
  }
}
