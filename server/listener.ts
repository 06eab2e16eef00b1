// The coordinator's WebSocket server. permessage-deflate is off: every frame is its header plus
// the codec's bytes, which the byte ledger relies on. ws's own payload cap is the largest an
// authenticated worker may send (the session holds an unauthenticated one to the hello's size by
// the frame header, worker-session.ts). Every TCP connection passes the connection gate from its
// accept (a deadline to its hello, a cap on those without one), and a closing handshake the peer
// does not answer ends after closingDeadlineSeconds instead of ws's default 30 s.

import { createServer as createHttpServer, type Server as HttpServer } from 'node:http';
import { createServer as createHttpsServer } from 'node:https';
import { readFileSync } from 'node:fs';
import type { Socket } from 'node:net';
import { WebSocketServer, type ServerOptions, type WebSocket } from 'ws';
import { CONNECTION_LIMITS } from '../src/protocol/index.js';
import type { ConnectionGate } from './connection-gate.js';

export interface TlsFiles {
  certFile: string;
  keyFile: string;
}

export interface ListenerOptions {
  host: string;
  /** 0: the OS picks a free port */
  port: number;
  /** the largest data message ws accepts from an authenticated worker */
  maxPayloadBytes: number;
  tls: TlsFiles | null;
  /** deadlines and the cap for connections that have not passed their hello */
  gate: ConnectionGate;
  log: (line: string) => void;
}

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
  // Under TLS too, 'connection' is the TCP accept: the gate's deadline covers the TLS handshake.
  http.on('connection', (socket: Socket) => options.gate.admit(socket));
  // Listen before ws attaches: ws re-emits the server's errors on itself, so a busy port would
  // surface as an unhandled 'error' event instead of this rejection.
  await new Promise<void>((resolve, reject) => {
    http.once('error', reject);
    http.listen(options.port, options.host, () => {
      http.off('error', reject);
      resolve();
    });
  });
  // closeTimeout and maxPendingAutoPongs are options of ws 8.23 (lib/websocket-server.js) that
  // @types/ws 8.18 does not list yet.
  const wsOptions: ServerOptions & { closeTimeout: number; maxPendingAutoPongs: number } = {
    server: http,
    perMessageDeflate: false,
    maxPayload: options.maxPayloadBytes,
    closeTimeout: CONNECTION_LIMITS.closingDeadlineSeconds * 1000,
    maxPendingAutoPongs: CONNECTION_LIMITS.pendingPongsMax,
    clientTracking: true,
  };
  const wss = new WebSocketServer(wsOptions);
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
        options.gate.close();
        for (const client of wss.clients) client.terminate();
        wss.close(() => http.close(() => resolve()));
        http.closeAllConnections();
      }),
  };
}
