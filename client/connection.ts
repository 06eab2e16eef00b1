// Reaching the coordinator: a WebSocket connection, retried with exponential backoff (doubling
// from a first delay up to a cap) for a bounded number of attempts, so that workers may start
// before the coordinator listens and a transient refusal does not end them.

import WebSocket from 'ws';
import { sleepSeconds } from './sleep.js';

export interface RetryPolicy {
  attemptsMax: number;
  firstDelaySeconds: number;
  delayCapSeconds: number;
  /** one attempt's limit for the TCP and WebSocket handshake */
  connectTimeoutSeconds: number;
}

export const DEFAULT_RETRY_POLICY: RetryPolicy = { attemptsMax: 8, firstDelaySeconds: 0.25, delayCapSeconds: 5, connectTimeoutSeconds: 10 };

/** The wait before attempt `attempt` (1-based; the first attempt does not wait). */
export function backoffSeconds(policy: RetryPolicy, attempt: number): number {
  if (attempt <= 1) return 0;
  return Math.min(policy.delayCapSeconds, policy.firstDelaySeconds * 2 ** (attempt - 2));
}

export class JoinError extends Error {
  readonly code = 'E_JOIN';
}

/** Receives every frame; attached before the connection opens, since the server speaks first. */
export type FrameListener = (frame: Uint8Array, ws: WebSocket) => void;

function connectOnce(url: string, policy: RetryPolicy, maxPayloadBytes: number, onFrame: FrameListener): Promise<WebSocket> {
  return new Promise((resolve, reject) => {
    const ws = new WebSocket(url, { perMessageDeflate: false, maxPayload: maxPayloadBytes, handshakeTimeout: policy.connectTimeoutSeconds * 1000 });
    ws.binaryType = 'nodebuffer';
    // The challenge may arrive with the upgrade response, before an 'open' listener's promise
    // continuation could attach a handler; so the handler is attached here, now.
    ws.on('message', (data: Buffer) => onFrame(new Uint8Array(data.buffer, data.byteOffset, data.byteLength), ws));
    const fail = (error: Error): void => {
      ws.removeAllListeners();
      ws.on('error', () => undefined);
      ws.terminate();
      reject(error);
    };
    ws.once('open', () => {
      ws.off('error', fail);
      resolve(ws);
    });
    ws.once('error', fail);
  });
}

/** Connects, retrying with backoff; rejects with JoinError after the last attempt. */
export async function connectWithRetry(url: string, policy: RetryPolicy, maxPayloadBytes: number, onFrame: FrameListener, log: (line: string) => void): Promise<WebSocket> {
  let lastError: Error | null = null;
  for (let attempt = 1; attempt <= policy.attemptsMax; attempt++) {
    await sleepSeconds(backoffSeconds(policy, attempt));
    try {
      return await connectOnce(url, policy, maxPayloadBytes, onFrame);
    } catch (error) {
      lastError = error as Error;
      log(`attempt ${attempt}/${policy.attemptsMax} to reach ${url} failed: ${lastError.message}`);
    }
  }
  throw new JoinError(`could not reach ${url} after ${policy.attemptsMax} attempts (${lastError?.message ?? 'no attempt'})`);
}
