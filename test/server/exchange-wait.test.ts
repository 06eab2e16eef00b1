// Waiting for one exchange's ups ends when everyone answered or left, at the k-th arrival for
// wall-clock fastest-k, and never later than its time limit.

import { describe, expect, it } from 'vitest';
import { ExchangeWait, type Arrival } from '../../server/exchange-wait.js';

const arrival = {} as Arrival;
const now = () => 0;

describe('ExchangeWait', () => {
  it('completes once each client arrived or was lost', async () => {
    const wait = new ExchangeWait(1, 'local', [0, 1, 2], { kind: 'all' }, 60, now);
    wait.deliver(0, arrival);
    wait.lose(2);
    expect(wait.closed).toBe(false);
    wait.deliver(1, arrival);
    await wait.done;
    expect(wait.cause).toBe('complete');
  });

  it('closes at the k-th arrival and ignores later ones', async () => {
    const wait = new ExchangeWait(1, 'local', [0, 1, 2, 3], { kind: 'first-k', k: 2 }, 60, now);
    wait.deliver(3, arrival);
    wait.deliver(1, arrival);
    await wait.done;
    wait.deliver(0, arrival);
    expect(wait.cause).toBe('first-k');
    expect(wait.arrivalOrder).toEqual([3, 1]);
  });

  it('gives up at its time limit', async () => {
    const wait = new ExchangeWait(1, 'local', [0], { kind: 'all' }, 0.01, now);
    await wait.done;
    expect(wait.cause).toBe('timeout');
    expect(wait.pending()).toEqual([0]);
  });
});
