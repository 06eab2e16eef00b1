// The live view's listener: GET / is the page, /feed the push channel (a WebSocket). Loopback
// by default; beyond loopback a viewer must present the run's view token (view-token.ts) in its
// first message before it is sent anything. The page is read-only: a viewer sends that one
// message and nothing after it, and nothing a viewer sends changes the run.

import { createServer, type IncomingMessage, type Server } from 'node:http';
import type { AddressInfo, Socket } from 'node:net';
import { performance } from 'node:perf_hooks';
import { WebSocketServer, type RawData, type WebSocket } from 'ws';
import { z } from 'zod';
import { isLoopbackHost, urlHost, type HostPort } from '../../runtime/address.js';
import { listenFailure } from '../../runtime/listen-error.js';
import { LogLimiter } from '../log-limiter.js';
import type { ViewFeed } from './view-feed.js';
import { VIEW_TOKEN_CHARS_MAX, viewTokenFor, viewTokenMatches } from './view-token.js';

export const VIEW_LIMITS = {
  /** viewers at once, admitted or still owing their hello */
  viewersMax: 64,
  /** from the upgrade to the viewer's hello */
  helloDeadlineSeconds: 5,
  /** the largest message a viewer may send (its hello) */
  helloBytesMax: 256,
  /** refusals are logged at most once per this many seconds (with a count of the rest) */
  logIntervalSeconds: 10,
} as const;

export const VIEW_FEED_PATH = '/feed';

/** WebSocket close code for a refused viewer (RFC 6455 section 7.4.1: 1008, policy violation). */
const CLOSE_POLICY = 1008;

/** A viewer's one message. Unknown members are refused: nothing else is read from a viewer. */
const viewerHelloSchema = z
  .object({ viewToken: z.string().max(VIEW_TOKEN_CHARS_MAX).optional() })
  .strict();

export interface ViewServerOptions {
  address: HostPort;
  /** the run's key (the workers' key file) */
  key: Uint8Array;
  feed: ViewFeed;
  page: string;
  log: (line: string) => void;
}

export interface ViewServer {
  /** the page's URL; beyond loopback it carries the view token in its fragment */
  url: string;
  port: number;
  keyRequired: boolean;
  close(): Promise<void>;
}

/** Listens on `options.address`; rejects with a ListenError when the address cannot be had. */
export function startViewServer(options: ViewServerOptions): Promise<ViewServer> {
  const keyRequired = !isLoopbackHost(options.address.host);
  const refusals = new LogLimiter(options.log, VIEW_LIMITS.logIntervalSeconds, () =>
    performance.now(),
  );
  const wss = new WebSocketServer({
    noServer: true,
    maxPayload: VIEW_LIMITS.helloBytesMax,
    perMessageDeflate: false,
  });
  let connections = 0;
  const http: Server = createServer((request, response) => {
    const path = (request.url ?? '').split('?')[0];
    if (path !== '/' || (request.method !== 'GET' && request.method !== 'HEAD')) {
      response
        .writeHead(404, { 'content-type': 'text/plain; charset=utf-8' })
        .end(`not found; the live view is at / and its feed at ${VIEW_FEED_PATH}\n`);
      return;
    }
    response.writeHead(200, {
      'content-type': 'text/html; charset=utf-8',
      'cache-control': 'no-store',
      // The page fetches nothing: its script and style are inline, its feed is this origin's.
      'content-security-policy':
        "default-src 'none'; script-src 'unsafe-inline'; style-src 'unsafe-inline'; connect-src 'self'",
    });
    response.end(request.method === 'HEAD' ? undefined : options.page);
  });
  http.on('upgrade', (request: IncomingMessage, socket: Socket, head: Buffer) => {
    const path = (request.url ?? '').split('?')[0];
    if (path !== VIEW_FEED_PATH || connections >= VIEW_LIMITS.viewersMax) {
      const status = path !== VIEW_FEED_PATH ? '404 Not Found' : '503 Service Unavailable';
      socket.end(`HTTP/1.1 ${status}\r\nconnection: close\r\ncontent-length: 0\r\n\r\n`);
      return;
    }
    connections++;
    socket.once('close', () => connections--);
    wss.handleUpgrade(request, socket, head, (viewer) =>
      awaitHello(viewer, request.socket.remoteAddress ?? 'unknown'),
    );
  });

  const awaitHello = (viewer: WebSocket, peer: string): void => {
    viewer.on('error', () => viewer.terminate());
    const refuse = (reason: string): void => {
      refusals.line('refused', `live view: refused a viewer from ${peer}: ${reason}`);
      viewer.close(CLOSE_POLICY, reason);
    };
    const deadline = setTimeout(
      () => refuse(`E_VIEW_HELLO: no hello within ${VIEW_LIMITS.helloDeadlineSeconds} s`),
      VIEW_LIMITS.helloDeadlineSeconds * 1000,
    );
    viewer.once('close', () => clearTimeout(deadline));
    viewer.once('message', (data: RawData, isBinary: boolean) => {
      clearTimeout(deadline);
      const hello = isBinary ? null : parseHello(data);
      if (hello === null) {
        refuse('E_VIEW_HELLO: the first message must be {"viewToken": "..."} as JSON text');
        return;
      }
      if (keyRequired && !viewTokenMatches(options.key, hello.viewToken ?? '')) {
        refuse(
          'E_VIEW_KEY: this view listens beyond loopback; open the link the coordinator printed',
        );
        return;
      }
      viewer.on('message', () =>
        viewer.close(CLOSE_POLICY, 'E_VIEW_READ_ONLY: the view takes no input'),
      );
      options.feed.add(viewer);
    });
  };

  return new Promise((resolve, reject) => {
    const onError = (error: Error): void => reject(listenFailure(error, '--view', options.address));
    http.once('error', onError);
    http.listen(options.address.port, options.address.host, () => {
      http.off('error', onError);
      http.on('error', (error) => options.log(`live view: ${error.message}`));
      const port = (http.address() as AddressInfo).port;
      const base = `http://${urlHost(options.address.host)}:${port}/`;
      resolve({
        url: keyRequired ? `${base}#view=${viewTokenFor(options.key)}` : base,
        port,
        keyRequired,
        close: () =>
          new Promise<void>((done) => {
            refusals.flush();
            for (const viewer of wss.clients) viewer.terminate();
            http.close(() => done());
            http.closeAllConnections();
          }),
      });
    });
  });
}

function parseHello(data: RawData): { viewToken?: string } | null {
  try {
    const parsed = viewerHelloSchema.safeParse(JSON.parse(String(data)));
    return parsed.success ? parsed.data : null;
  } catch {
    return null;
  }
}
