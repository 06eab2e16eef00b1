// Reconnection: exponential backoff doubling from the first delay up to a cap (common
// practice), a bounded number of attempts and a bounded total wait that end in E_WORKER_JOIN,
// with a line after every failed attempt. A malformed frame
// from the coordinator closes the connection with its RFC 6455 code and is logged, never thrown.

import { createServer as createHttpServer } from 'node:http';
import { createServer, type Socket } from 'node:net';
import { WebSocketServer } from 'ws';
import { describe, expect, it } from 'vitest';
import { CLOSE_PROTOCOL_ERROR } from '../../src/protocol/index.js';
import {
  backoffSeconds,
  connectWithRetry,
  JOIN_RETRY_POLICY,
  JoinError,
  type RetryPolicy,
} from '../../client/connection.js';

const policy: RetryPolicy = {
  attemptsMax: 3,
  firstDelaySeconds: 0.01,
  delayFactor: 2,
  delayCapSeconds: 0.03,
  waitTotalSeconds: 10,
  connectTimeoutSeconds: 2,
};

describe('backoff', () => {
  it('waits nothing first, then doubles up to the cap', () => {
    expect([1, 2, 3, 4, 5].map((a) => backoffSeconds(policy, a))).toEqual([
      0, 0.01, 0.02, 0.03, 0.03,
    ]);
  });

  it('gives up with E_WORKER_JOIN after the last attempt', async () => {
    // A port that was free a moment ago: nothing listens there now.
    const probe = createServer();
    await new Promise<void>((r) => probe.listen(0, '127.0.0.1', () => r()));
    const port = (probe.address() as { port: number }).port;
    await new Promise<void>((r) => probe.close(() => r()));
    const lines: string[] = [];
    const error = await connectWithRetry(
      `ws://127.0.0.1:${port}`,
      policy,
      1024,
      () => undefined,
      (l) => lines.push(l),
    ).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(JoinError);
    expect((error as JoinError).code).toBe('E_WORKER_JOIN');
    expect(lines).toHaveLength(3);
  });
});

describe('a bounded total wait', () => {
  it('grows each wait by the factor up to the cap, and stops before the total would be passed', async () => {
    const bounded: RetryPolicy = {
      ...policy,
      attemptsMax: 100,
      delayFactor: 3,
      delayCapSeconds: 0.05,
      waitTotalSeconds: 0.1,
    };
    expect([1, 2, 3, 4, 5].map((a) => backoffSeconds(bounded, a))).toEqual([
      0, 0.01, 0.03, 0.05, 0.05,
    ]);
    const probe = createServer();
    await new Promise<void>((r) => probe.listen(0, '127.0.0.1', () => r()));
    const port = (probe.address() as { port: number }).port;
    await new Promise<void>((r) => probe.close(() => r()));
    const lines: string[] = [];
    const error = await connectWithRetry(
      `ws://127.0.0.1:${port}`,
      bounded,
      1024,
      () => undefined,
      (l) => lines.push(l),
    ).catch((e: unknown) => e);
    // waits 0, 0.01, 0.03, 0.05 add up to 0.09; a fifth attempt would bring them to 0.14 > 0.1
    expect(lines).toHaveLength(4);
    expect((error as JoinError).message).toMatch(/after 4 attempts in 0\.09 s of waiting/);
  });

  it('says while waiting when the next attempt comes, and names the option that waits longer', async () => {
    const joining: RetryPolicy = {
      ...policy,
      attemptsMax: JOIN_RETRY_POLICY.attemptsMax,
      waitTotalSeconds: 0.02,
      waitTotalOption: '--join-wait-seconds',
    };
    const probe = createServer();
    await new Promise<void>((r) => probe.listen(0, '127.0.0.1', () => r()));
    const port = (probe.address() as { port: number }).port;
    await new Promise<void>((r) => probe.close(() => r()));
    const url = `ws://127.0.0.1:${port}`;
    const lines: string[] = [];
    const error = await connectWithRetry(
      url,
      joining,
      1024,
      () => undefined,
      (l) => lines.push(l),
    ).catch((e: unknown) => e);
    // waits 0 and 0.01; the next, 0.02, would bring them to 0.03 > 0.02
    expect(lines).toHaveLength(2);
    expect(lines[0]).toMatch(
      new RegExp(
        `^waiting for the coordinator at ${url} \\(attempt 1: .*ECONNREFUSED.*\\); next attempt in 0\\.01 s, 0\\.00 of 0\\.02 s of waiting spent$`,
      ),
    );
    expect(lines[1]).toMatch(
      /^cannot reach .* \(attempt 2: .*\); giving up, 0\.01 of 0\.02 s of waiting spent$/,
    );
    expect((error as JoinError).message).toMatch(
      /after 2 attempts in 0\.01 s of waiting \(.*\); --join-wait-seconds waits longer \(it is 0\.02 s\)$/,
    );
  });

  it('lets a joining worker wait minutes for a coordinator that a cluster starts late', () => {
    // Common practice for a cluster start (image pulls, scheduling): five minutes by default.
    expect(JOIN_RETRY_POLICY.waitTotalSeconds).toBe(300);
    // The total wait binds, not the count: attempts at most 5 s apart fill a day, the longest wait.
    let waitedSeconds = 0;
    let attempt = 1;
    while (waitedSeconds <= 86_400) waitedSeconds += backoffSeconds(JOIN_RETRY_POLICY, ++attempt);
    expect(attempt).toBeLessThan(JOIN_RETRY_POLICY.attemptsMax);
  });
});

describe('a malformed frame from the coordinator', () => {
  it('closes the connection with 1002 and is logged under its reason', async () => {
    const http = createHttpServer();
    const wss = new WebSocketServer({ noServer: true });
    http.on('upgrade', (request, socket, head) => {
      wss.handleUpgrade(request, socket, head, (serverSide) => {
        serverSide.on('error', () => undefined);
        // RFC 6455 section 5.1: a server must not mask its frames; this one-byte binary frame is masked.
        setTimeout(
          () => (socket as Socket).write(Buffer.from([0x82, 0x81, 1, 2, 3, 4, 0xc0 ^ 1])),
          50,
        );
      });
    });
    await new Promise<void>((r) => http.listen(0, '127.0.0.1', () => r()));
    const port = (http.address() as { port: number }).port;
    const lines: string[] = [];
    try {
      const ws = await connectWithRetry(
        `ws://127.0.0.1:${port}`,
        policy,
        1024,
        () => undefined,
        (l) => lines.push(l),
      );
      await new Promise<void>((resolve) => ws.once('close', () => resolve()));
      expect(
        lines.some((l) => l.includes(`code ${CLOSE_PROTOCOL_ERROR}`) && l.includes('E_FRAME_MASK')),
      ).toBe(true);
    } finally {
      for (const client of wss.clients) client.terminate();
      http.closeAllConnections();
      await new Promise<void>((r) => http.close(() => r()));
    }
  });
});
