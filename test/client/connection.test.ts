// Reconnection: exponential backoff doubling from the first delay up to a cap (common
// practice), and a bounded number of attempts that ends in E_WORKER_JOIN.

import { createServer } from 'node:net';
import { describe, expect, it } from 'vitest';
import { backoffSeconds, connectWithRetry, JoinError, type RetryPolicy } from '../../client/connection.js';

const policy: RetryPolicy = { attemptsMax: 3, firstDelaySeconds: 0.01, delayCapSeconds: 0.03, connectTimeoutSeconds: 2 };

describe('backoff', () => {
  it('waits nothing first, then doubles up to the cap', () => {
    expect([1, 2, 3, 4, 5].map((a) => backoffSeconds(policy, a))).toEqual([0, 0.01, 0.02, 0.03, 0.03]);
  });

  it('gives up with E_WORKER_JOIN after the last attempt', async () => {
    // A port that was free a moment ago: nothing listens there now.
    const probe = createServer();
    await new Promise<void>((r) => probe.listen(0, '127.0.0.1', () => r()));
    const port = (probe.address() as { port: number }).port;
    await new Promise<void>((r) => probe.close(() => r()));
    const lines: string[] = [];
    const error = await connectWithRetry(`ws://127.0.0.1:${port}`, policy, 1024, () => undefined, (l) => lines.push(l)).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(JoinError);
    expect((error as JoinError).code).toBe('E_WORKER_JOIN');
    expect(lines).toHaveLength(3);
  });
});
