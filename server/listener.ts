// The coordinator's WebSocket server. permessage-deflate is off: every frame is its header plus
// the codec's bytes, which the byte ledger relies on. ws's own payload cap sits well above the
// largest legal message, so that an oversized frame reaches our size check and earns an E_SIZE
// error reply instead of ws closing the connection.

import { createServer as createHttpServer, type Server as HttpServer } from 'node:http';
import { createServer as createHttpsServer } from 'node:https';
import { readFileSync } from 'node:fs';
import type { Socket } from 'node:net';
import { WebSocketServer, type WebSocket } from 'ws';

export interface TlsFiles {
  certFile: string;
  keyFile: string;
}

export interface ListenerOptions {
  host: string;
  /** 0: the OS picks a free port */
  port: number;
  /** the largest frame a worker may legally send, before our own check */
  maxFrameBytes: number;
  tls: TlsFiles | null;
  /** most simultaneous connections, handshaking ones included */
  connectionsMax: number;
  log: (line: string) => void;
}

/** Headroom over the legal maximum: frames up to twice the limit reach our check and get E_SIZE. */
const WS_PAYLOAD_HEADROOM_FACTOR = 2;

export interface Listener {
  /** ws:// or wss:// URL workers join with */
  url: string;
  port: number;
  close(): Promise<void>;
}

export async function startListener(
  options: ListenerOptions,
  onConnection: (ws: WebSocket, socket: Socket) => void,
): Promise<Listener> {
  const http: HttpServer = options.tls
    ? createHttpsServer({
        cert: readFileSync(options.tls.certFile),
        key: readFileSync(options.tls.keyFile),
      })
    : createHttpServer();
  http.maxConnections = options.connectionsMax;
  // Listen before ws attaches: ws re-emits the server's errors on itself, so a busy port would
  // surface as an unhandled 'error' event instead of this rejection.
  await new Promise<void>((resolve, reject) => {
    http.once('error', reject);
    http.listen(options.port, options.host, () => {
      http.off('error', reject);
      resolve();
    });
  });
  const wss = new WebSocketServer({
    server: http,
    perMessageDeflate: false,
    maxPayload: options.maxFrameBytes * WS_PAYLOAD_HEADROOM_FACTOR,
    clientTracking: true,
  });
  wss.on('connection', (ws, request) => onConnection(ws, request.socket as Socket));
  // ws re-emits the HTTP server's errors, and an 'error' with no listener ends the process. Once
  // listening, a server error (say, no file descriptor left to accept a connection with, which
  // enough peers can cause) costs that connection only.
  wss.on('error', (error) =>
    options.log(`the listener failed to accept a connection: ${error.message}`),
  );
  const address = http.address();
  if (address === null || typeof address === 'string')
    throw new Error('the listener has no TCP address');
  const hostForUrl = address.family === 'IPv6' ? `[${address.address}]` : address.address;
  return {
    url: `${options.tls ? 'wss' : 'ws'}://${hostForUrl}:${address.port}`,
    port: address.port,
    close: () =>
      new Promise<void>((resolve) => {
        for (const client of wss.clients) client.terminate();
        wss.close(() => http.close(() => resolve()));
        http.closeAllConnections();
      }),
  };
}
