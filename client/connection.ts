// Reaching the coordinator: a WebSocket connection, retried with exponential backoff (each wait
// a factor longer than the one before, from a first delay up to a cap) for a bounded number of
// attempts and a bounded total wait, so that workers may start long before the coordinator
// listens (JOIN_RETRY_POLICY: a cluster pulls images and schedules pods in any order), a
// transient refusal does not end them, and a worker whose coordinator died waits for it to be
// resumed (RECONNECT_RETRY_POLICY) but not forever. Every failed attempt logs one line that says
// what failed, when the next attempt comes and how much of the wait is spent. A failure that no
// retry can mend (the scheme does not match the coordinator's TLS, its certificate is not
// trusted) ends the join at once with a message that says what to change.

import { connect as connectTls, rootCertificates } from 'node:tls';
import WebSocket from 'ws';
import { classifyFrameError } from '../src/protocol/index.js';
import { sleepSeconds } from './sleep.js';

export interface RetryPolicy {
  attemptsMax: number;
  /** the wait before the second attempt */
  firstDelaySeconds: number;
  /** each wait is this many times the one before, up to the cap */
  delayFactor: number;
  delayCapSeconds: number;
  /** the waits between attempts add up to at most this; an attempt that would wait longer is not made */
  waitTotalSeconds: number;
  /** one attempt's limit for the TCP and WebSocket handshake */
  connectTimeoutSeconds: number;
  /** the option that sets waitTotalSeconds, named when the wait runs out */
  waitTotalOption?: string;
}

/**
 * Joining: the coordinator may start minutes after its workers (on a cluster, its image is
 * pulled and its pod scheduled in no set order). The total wait binds, not the attempts: at
 * the longest --join-wait-seconds, a day, with attempts 5 s apart, about 17,300 attempts. The worker's
 * --join-wait-seconds replaces the total wait.
 */
export const JOIN_RETRY_POLICY: RetryPolicy = {
  attemptsMax: 20_000,
  firstDelaySeconds: 0.25,
  delayFactor: 2,
  delayCapSeconds: 5,
  waitTotalSeconds: 300,
  connectTimeoutSeconds: 10,
  waitTotalOption: '--join-wait-seconds',
};

/**
 * Reconnecting mid-run: long enough for an operator to resume a coordinator that died
 * (`roundwire resume`), bounded so that a worker whose run is over does not wait forever. The
 * worker's --reconnect-wait-seconds replaces the total wait.
 */
export const RECONNECT_RETRY_POLICY: RetryPolicy = {
  attemptsMax: 1000,
  firstDelaySeconds: 0.25,
  delayFactor: 2,
  delayCapSeconds: 5,
  waitTotalSeconds: 120,
  connectTimeoutSeconds: 10,
  waitTotalOption: '--reconnect-wait-seconds',
};

/** The wait before attempt `attempt` (1-based; the first attempt does not wait). */
export function backoffSeconds(policy: RetryPolicy, attempt: number): number {
  if (attempt <= 1) return 0;
  return Math.min(
    policy.delayCapSeconds,
    policy.firstDelaySeconds * policy.delayFactor ** (attempt - 2),
  );
}

export class JoinError extends Error {
  readonly code = 'E_WORKER_JOIN';
}

/** Receives every frame; attached before the connection opens, since the server speaks first. */
export type FrameListener = (frame: Uint8Array, ws: WebSocket) => void;

/**
 * OpenSSL's verification results (openssl-verify(1), "Diagnostics") and Node's host-name check:
 * the certificate chain is what it is, so retrying cannot help.
 */
const CERTIFICATE_ERROR_CODES: ReadonlySet<string> = new Set([
  'DEPTH_ZERO_SELF_SIGNED_CERT',
  'SELF_SIGNED_CERT_IN_CHAIN',
  'UNABLE_TO_VERIFY_LEAF_SIGNATURE',
  'UNABLE_TO_GET_ISSUER_CERT',
  'UNABLE_TO_GET_ISSUER_CERT_LOCALLY',
  'CERT_UNTRUSTED',
  'CERT_HAS_EXPIRED',
  'CERT_NOT_YET_VALID',
  'CERT_REVOKED',
  'ERR_TLS_CERT_ALTNAME_INVALID',
]);

function connectOnce(
  url: string,
  policy: RetryPolicy,
  maxPayloadBytes: number,
  onFrame: FrameListener,
  log: (line: string) => void,
  trustedCertificatesPem: string | null,
): Promise<WebSocket> {
  return new Promise((resolve, reject) => {
    const ws = new WebSocket(url, {
      perMessageDeflate: false,
      maxPayload: maxPayloadBytes,
      handshakeTimeout: policy.connectTimeoutSeconds * 1000,
      // Node's `ca` replaces the default roots; the extra certificates are trusted beside them.
      ...(trustedCertificatesPem === null
        ? {}
        : { ca: [...rootCertificates, trustedCertificatesPem] }),
    });
    ws.binaryType = 'nodebuffer';
    // The challenge may arrive with the upgrade response, before an 'open' listener's promise
    // continuation could attach a handler; so the handler is attached here, now.
    ws.on('message', (data: Buffer) =>
      onFrame(new Uint8Array(data.buffer, data.byteOffset, data.byteLength), ws),
    );
    const fail = (error: Error): void => {
      ws.removeAllListeners();
      ws.on('error', () => undefined);
      ws.terminate();
      reject(error);
    };
    ws.once('open', () => {
      ws.off('error', fail);
      // Once open, an 'error' is a frame that broke RFC 6455: ws closes the connection with the
      // matching close code, and the worker's close handler takes it from there. An 'error' with
      // no listener would end the process, so one listens from here on.
      ws.on('error', (error) => {
        const failure = classifyFrameError(error);
        log(
          `the connection was closed with code ${failure.closeCode} (${failure.reason}): ${failure.detail}`,
        );
      });
      resolve(ws);
    });
    ws.once('error', fail);
  });
}

/** Resolves to true when a TLS handshake with host:port completes, whoever signed its certificate. */
function speaksTls(url: URL, timeoutSeconds: number): Promise<boolean> {
  return new Promise((resolve) => {
    // Only asks whether the port answers in TLS; nothing is sent over this connection.
    const socket = connectTls({
      host: url.hostname.replace(/^\[|\]$/g, ''),
      port: Number(url.port || 80),
      rejectUnauthorized: false,
    });
    const settle = (answer: boolean): void => {
      socket.destroy();
      resolve(answer);
    };
    socket.setTimeout(timeoutSeconds * 1000, () => settle(false));
    socket.once('secureConnect', () => settle(true));
    socket.once('error', () => settle(false));
  });
}

/** Why no retry can succeed, as advice to the user; null when the failure may be transient. */
async function permanentFailure(
  url: string,
  error: Error & { code?: string },
  policy: RetryPolicy,
): Promise<string | null> {
  const parsed = new URL(url);
  const code = error.code ?? '';
  if (parsed.protocol === 'wss:') {
    if (CERTIFICATE_ERROR_CODES.has(code)) {
      return `the coordinator's TLS certificate was refused (${code}: ${error.message}); if it is self-signed or from a private authority, give the worker --ca FILE with that certificate`;
    }
    if (code === 'EPROTO' && /wrong version number/.test(error.message)) {
      return `${parsed.host} does not speak TLS: join with ws://${parsed.host} instead of wss://`;
    }
    return null;
  }
  // A TLS server drops a plain HTTP upgrade request without a reply.
  if (
    (code === 'ECONNRESET' || /socket hang up/.test(error.message)) &&
    (await speaksTls(parsed, policy.connectTimeoutSeconds))
  ) {
    return `${parsed.host} serves TLS: join with wss://${parsed.host} instead of ws://`;
  }
  return null;
}

/**
 * Connects, retrying with backoff; rejects with JoinError after the last attempt, or at once
 * when the failure is one no retry can mend. `trustedCertificatesPem` adds certificates (PEM) to
 * the ones a wss:// coordinator may present, e.g. its own self-signed one.
 */
export async function connectWithRetry(
  url: string,
  policy: RetryPolicy,
  maxPayloadBytes: number,
  onFrame: FrameListener,
  log: (line: string) => void,
  trustedCertificatesPem: string | null = null,
): Promise<WebSocket> {
  let lastError: Error | null = null;
  let waitedSeconds = 0;
  let attempt = 1;
  for (; attempt <= policy.attemptsMax; attempt++) {
    const delaySeconds = backoffSeconds(policy, attempt);
    if (waitedSeconds + delaySeconds > policy.waitTotalSeconds) break;
    waitedSeconds += delaySeconds;
    await sleepSeconds(delaySeconds);
    try {
      return await connectOnce(url, policy, maxPayloadBytes, onFrame, log, trustedCertificatesPem);
    } catch (error) {
      lastError = error as Error;
      const advice = await permanentFailure(url, lastError, policy);
      if (advice !== null) throw new JoinError(`could not join ${url}: ${advice}`);
      log(attemptFailedLine(url, policy, attempt, waitedSeconds, lastError));
    }
  }
  const raise =
    policy.waitTotalOption === undefined
      ? ''
      : `; ${policy.waitTotalOption} waits longer (it is ${policy.waitTotalSeconds} s)`;
  throw new JoinError(
    `could not reach ${url} after ${attempt - 1} attempts in ${waitedSeconds.toFixed(2)} s of waiting (${lastError?.message ?? 'no attempt'})${raise}`,
  );
}

/** The line logged after a failed attempt: what failed, and what comes next. */
function attemptFailedLine(
  url: string,
  policy: RetryPolicy,
  attempt: number,
  waitedSeconds: number,
  error: Error,
): string {
  const nextDelaySeconds = backoffSeconds(policy, attempt + 1);
  const spent = `${waitedSeconds.toFixed(2)} of ${policy.waitTotalSeconds} s of waiting spent`;
  if (attempt >= policy.attemptsMax || waitedSeconds + nextDelaySeconds > policy.waitTotalSeconds)
    return `cannot reach ${url} (attempt ${attempt}: ${error.message}); giving up, ${spent}`;
  return `waiting for the coordinator at ${url} (attempt ${attempt}: ${error.message}); next attempt in ${nextDelaySeconds.toFixed(2)} s, ${spent}`;
}
