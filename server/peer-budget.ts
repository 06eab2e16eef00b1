// What one authenticated connection may send, checked before a message is decoded (so that
// counting costs O(1) whatever the peer sends), and how its bad messages are answered.
//
// Messages: every entry of a downs frame the coordinator sends grants the peer one credit (its
// client's up, or an error in its place), so a worker is never held to a rate the run itself
// sets; beyond those credits, messages draw on a token bucket. A frame spends one credit when it
// arrives (before it is decoded) and, once decoded, one more for each further entry it holds: a
// worker that answers a frame of n entries with one ups frame of n entries (virtual clock) or
// with several smaller ones (wall clock) spends the same n credits. A message no larger than a heartbeat or an error can be
// draws on the bucket first and on a credit when it is empty; a larger one (only an up can be)
// needs a credit, and without one it is refused by its size, never decoded: a peer can make the
// coordinator decode large frames only as often as it was sent entries. Bad messages: each
// draws on one bucket that, once empty, drops the peer, and is answered with an error only while
// a second, smaller one lasts, so that a peer cannot make the coordinator write without end.

import { CONNECTION_LIMITS } from '../src/protocol/index.js';
import { TokenBucket } from './token-bucket.js';

export type BadMessageVerdict = 'reply' | 'silent' | 'drop';

/** 'control': within the control-message size; 'credited': larger, on a down's credit; 'uncredited': larger, with none left; 'over-rate': nothing left. */
export type MessageAdmission = 'control' | 'credited' | 'uncredited' | 'over-rate';

export interface PeerBudgetLimits {
  unsolicitedMessagesPerSecond: number;
  unsolicitedMessagesBurst: number;
  errorRepliesPerSecond: number;
  errorRepliesBurst: number;
  badMessagesPerSecond: number;
  badMessagesBurst: number;
}

export class PeerBudget {
  /** entries granted by downs frames sent and not yet used */
  private credits = 0;
  private readonly unsolicited: TokenBucket;
  private readonly replies: TokenBucket;
  private readonly bad: TokenBucket;
  /** bad messages not answered because the reply bucket was empty */
  unansweredBadMessages = 0;

  constructor(nowMs: number, limits: PeerBudgetLimits = CONNECTION_LIMITS) {
    this.unsolicited = new TokenBucket(
      limits.unsolicitedMessagesPerSecond,
      limits.unsolicitedMessagesBurst,
      nowMs,
    );
    this.replies = new TokenBucket(limits.errorRepliesPerSecond, limits.errorRepliesBurst, nowMs);
    this.bad = new TokenBucket(limits.badMessagesPerSecond, limits.badMessagesBurst, nowMs);
  }

  /** A downs frame of `messages` entries went to the peer, or a checkpoint request (one state per client). */
  grant(messages: number): void {
    this.credits += messages;
  }

  /** A frame admitted on one credit held `entries` entries: the rest are spent now (down to none left). */
  spendEntries(entries: number): void {
    this.credits = Math.max(0, this.credits - Math.max(0, entries - 1));
  }

  /** A message of `bytes` arrived, not yet decoded; `controlBytesMax` bounds a heartbeat or an error. */
  admitMessage(nowMs: number, bytes: number, controlBytesMax: number): MessageAdmission {
    if (bytes <= controlBytesMax) {
      if (this.unsolicited.take(nowMs)) return 'control';
      if (this.credits === 0) return 'over-rate';
      this.credits -= 1;
      return 'control';
    }
    if (this.credits === 0) return 'uncredited';
    this.credits -= 1;
    return 'credited';
  }

  /** A message failed validation: answer it, count it only, or drop the peer. */
  badMessage(nowMs: number): BadMessageVerdict {
    if (!this.bad.take(nowMs)) return 'drop';
    if (this.replies.take(nowMs)) return 'reply';
    this.unansweredBadMessages += 1;
    return 'silent';
  }
}
