// The bytes a client's link carries in one exchange, as the link model prices them: the wire
// bytes (RFC 6455 header included, a worker's frames masked) of a round frame that holds the
// client's entry alone, encoded by the protocol's own encoder. Each client has a link of its own
// in the model (src/timing/links.ts), so what crosses it is a frame of its own: its vectors as
// the codec writes them (index and value encodings, the MessagePack and WebSocket headers), not
// the information alone (payload bytes).
//
// Why not each client's share of the frames the coordinator sent (the byte ledger's encoded and
// wire layers): those depend on how clients were dealt to worker processes, which hosting
// decides (capacities, join order) and the in-process engine does not know. A frame of its own
// is the same in both runtimes, so virtual-clock times stay identical between them, and it
// equals the ledger's share whenever a worker hosts one client.
//
// An up entry carries the client's compute, wait and transfer seconds, which are not known when
// its transfer is priced; they are counted as float64 values (9 bytes each), the form a measured
// time takes.
//
// Priced for every client in every exchange, in the round walk and in every worker, so the frame
// is sized, not written: the protocol's size functions follow its encoders piece by piece
// without copying a vector's bytes (tests hold them to frames actually encoded).

import {
  downEntryBytes,
  downsFrameBytes,
  encodeDownsPrefix,
  frameBytes,
  upEntryBytes,
  upsFrameBytes,
  type DownsPrefix,
} from '../protocol/index.js';
import type { EncodedFields } from './client-runtime.js';
import type { ClientAssignment } from './round-schedule.js';

/** A time that MessagePack writes as float64, standing for a client's seconds in an up entry. */
const SECONDS_STAND_IN = 0.5;

/**
 * The prefix of a one-entry downs frame (no common section) depends on the exchange alone, and
 * every client of an exchange is priced in a row: the last one is kept.
 */
let lastPrefix: { key: string; prefix: DownsPrefix } | null = null;

function ownDownsPrefix(
  round: number,
  exchangeIndex: number,
  deadlineSeconds: number | null,
  fieldNames: readonly string[],
): DownsPrefix {
  const key = `${round} ${exchangeIndex} ${deadlineSeconds} ${fieldNames.join(' ')}`;
  if (lastPrefix?.key !== key)
    lastPrefix = {
      key,
      prefix: encodeDownsPrefix(round, exchangeIndex, deadlineSeconds, fieldNames, {}),
    };
  return lastPrefix.prefix;
}

/** Wire bytes of a downs frame carrying `assignment`'s down alone (a server's frames are unmasked). */
export function ownDownFrameBytes(
  round: number,
  exchangeIndex: number,
  deadlineSeconds: number | null,
  assignment: Pick<ClientAssignment, 'clientId' | 'localSteps' | 'stepSize'>,
  encodedDown: EncodedFields,
): number {
  const prefix = ownDownsPrefix(round, exchangeIndex, deadlineSeconds, Object.keys(encodedDown));
  const entry = downEntryBytes(assignment, encodedDown, prefix);
  return frameBytes(downsFrameBytes(prefix, [entry]), false);
}

/** Wire bytes of an ups frame carrying client `clientId`'s up alone (a worker masks its frames). */
export function ownUpFrameBytes(
  round: number,
  exchangeIndex: number,
  clientId: number,
  stepsTaken: number,
  encodedUp: EncodedFields,
): number {
  const entry = upEntryBytes(
    {
      clientId,
      localSteps: stepsTaken,
      computeSeconds: SECONDS_STAND_IN,
      waitSeconds: SECONDS_STAND_IN,
      transferSeconds: SECONDS_STAND_IN,
    },
    encodedUp,
  );
  return frameBytes(upsFrameBytes(round, exchangeIndex, [entry]), true);
}
