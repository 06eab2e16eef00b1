// The live view's listener and feed over real 127.0.0.1 sockets: several viewers get the same
// events, a late one gets the bounded history, one that stops reading is dropped while the
// others go on, and beyond loopback a viewer without the view token is refused before it is
// sent anything.

import { randomBytes } from 'node:crypto';
import { connect, type Socket } from 'node:net';
import { afterEach, describe, expect, it } from 'vitest';
import { WebSocket } from 'ws';
import { ViewFeed } from '../../../server/live-view/view-feed.js';
import { startViewServer, type ViewServer } from '../../../server/live-view/view-server.js';
import { viewTokenFor } from '../../../server/live-view/view-token.js';

const key = new Uint8Array(randomBytes(32));
const servers: ViewServer[] = [];
const sockets: (WebSocket | Socket)[] = [];

afterEach(async () => {
  for (const socket of sockets.splice(0))
    if (socket instanceof WebSocket) socket.terminate();
    else socket.destroy();
  for (const server of servers.splice(0)) await server.close();
});

async function serve(feed: ViewFeed, host = '127.0.0.1'): Promise<ViewServer> {
  const server = await startViewServer({
    address: { host, port: 0 },
    key,
    feed,
    page: '<!doctype html><title>test</title>',
    log: () => undefined,
  });
  servers.push(server);
  return server;
}

interface Viewer {
  socket: WebSocket;
  events: { kind: string; round?: number }[];
  closed: Promise<{ code: number; reason: string }>;
}

/** A viewer on 127.0.0.1 that sends `hello` and keeps every event it gets. */
function viewer(port: number, hello: object): Promise<Viewer> {
  const socket = new WebSocket(`ws://127.0.0.1:${port}/feed`);
  sockets.push(socket);
  const events: Viewer['events'] = [];
  socket.on('message', (data) => events.push(JSON.parse(String(data)) as Viewer['events'][0]));
  const closed = new Promise<{ code: number; reason: string }>((resolve) =>
    socket.once('close', (code, reason) => resolve({ code, reason: String(reason) })),
  );
  return new Promise((resolve, reject) => {
    socket.once('error', reject);
    socket.once('open', () => {
      socket.send(JSON.stringify(hello));
      resolve({ socket, events, closed });
    });
  });
}

/** Polls `check` every 10 ms for at most `timeoutMs`. */
async function until(check: () => boolean, timeoutMs: number, what: string): Promise<void> {
  const started = Date.now();
  while (!check()) {
    if (Date.now() - started > timeoutMs) throw new Error(`not within ${timeoutMs} ms: ${what}`);
    await new Promise((resolve) => setTimeout(resolve, 10));
  }
}

/**
 * A client that completes the upgrade and its hello by hand, then never reads again: the frame
 * is a masked text frame as RFC 6455 section 5.2 lays it out (FIN + opcode 1, mask bit + length,
 * the 4-byte key, the payload XORed with it, section 5.3).
 */
function nonReadingViewer(port: number): Socket {
  const socket = connect(port, '127.0.0.1');
  sockets.push(socket);
  const payload = Buffer.from('{}');
  const mask = randomBytes(4);
  const masked = Buffer.from(payload.map((byte, i) => byte ^ mask[i % 4]));
  socket.write(
    `GET /feed HTTP/1.1\r\nHost: 127.0.0.1:${port}\r\nUpgrade: websocket\r\nConnection: Upgrade\r\n` +
      `Sec-WebSocket-Key: ${randomBytes(16).toString('base64')}\r\nSec-WebSocket-Version: 13\r\n\r\n`,
  );
  socket.write(Buffer.concat([Buffer.from([0x81, 0x80 | payload.length]), mask, masked]));
  socket.pause();
  return socket;
}

describe('the live view feed', () => {
  it('sends every viewer the same events, and a late viewer the bounded history', async () => {
    const feed = new ViewFeed({ viewerQueueBytesMax: 1 << 20, historyRoundsMax: 3 });
    const server = await serve(feed);
    const a = await viewer(server.port, {});
    const b = await viewer(server.port, {});
    await until(() => feed.viewerCount() === 2, 5_000, 'two viewers admitted');
    feed.publishHeader({ kind: 'run' });
    for (let round = 0; round <= 5; round++) feed.publishRound({ kind: 'round', round });
    feed.publishTiles({ kind: 'tiles', states: '0123' });
    await until(() => a.events.length === 8 && b.events.length === 8, 5_000, 'eight events each');
    expect(b.events).toEqual(a.events);
    expect(a.events.map((e) => e.round ?? e.kind)).toEqual(['run', 0, 1, 2, 3, 4, 5, 'tiles']);
    const late = await viewer(server.port, {});
    // The header, the last historyRoundsMax rounds, the latest tiles.
    await until(() => late.events.length === 5, 5_000, 'the history');
    expect(late.events.map((e) => e.round ?? e.kind)).toEqual(['run', 3, 4, 5, 'tiles']);
  });

  it('drops a viewer that stops reading, and the others go on', async () => {
    const queueBytes = 64 * 1024;
    const feed = new ViewFeed({ viewerQueueBytesMax: queueBytes, historyRoundsMax: 10 });
    const server = await serve(feed);
    const reader = await viewer(server.port, {});
    nonReadingViewer(server.port);
    await until(() => feed.viewerCount() === 2, 5_000, 'both viewers admitted');
    // 10,000 clients' tiles (the scenario limit) per event: the socket buffers of a stuck
    // viewer fill within a few megabytes, then its queue passes the limit.
    const states = '2'.repeat(10_000);
    let sent = 0;
    while (feed.dropped() === 0 && sent < 4_000) {
      feed.publishTiles({ kind: 'tiles', states, sent: sent++ });
      // Let the reading viewer read: the rounds never wait for viewers, but the test's reader must.
      if (sent % 20 === 0) await new Promise((resolve) => setImmediate(resolve));
    }
    expect(feed.dropped()).toBe(1);
    expect(feed.viewerCount()).toBe(1);
    feed.publishRound({ kind: 'round', round: 1 });
    await until(
      () => reader.events.some((e) => e.kind === 'round'),
      10_000,
      'the reader got the round after the drop',
    );
    expect(reader.events.filter((e) => e.kind === 'tiles')).toHaveLength(sent);
  });
});

describe('the live view beyond loopback', () => {
  it('refuses a viewer without the view token, and admits one with it', async () => {
    const feed = new ViewFeed();
    feed.publishHeader({ kind: 'run' });
    const server = await serve(feed, '0.0.0.0');
    expect(server.keyRequired).toBe(true);
    const token = viewTokenFor(key);
    expect(server.url).toContain(`#view=${token}`);
    // The key itself is in no URL: neither as hex nor as base64.
    for (const encoding of ['hex', 'base64', 'base64url'] as const)
      expect(server.url).not.toContain(Buffer.from(key).toString(encoding));
    const refused = await viewer(server.port, {});
    // RFC 6455 section 7.4.1: 1008, a policy violation.
    const closing = await refused.closed;
    expect(closing.code).toBe(1008);
    expect(closing.reason).toMatch(/^E_VIEW_KEY/);
    expect(refused.events).toEqual([]);
    const wrong = await viewer(server.port, { viewToken: viewTokenFor(new Uint8Array(32)) });
    expect((await wrong.closed).reason).toMatch(/^E_VIEW_KEY/);
    expect(wrong.events).toEqual([]);
    const admitted = await viewer(server.port, { viewToken: token });
    await until(() => admitted.events.length === 1, 5_000, 'the header');
    expect(admitted.events[0].kind).toBe('run');
  });

  it('on loopback admits a viewer without a token, and closes one that sends more', async () => {
    const feed = new ViewFeed();
    const server = await serve(feed);
    expect(server.keyRequired).toBe(false);
    const v = await viewer(server.port, {});
    await until(() => feed.viewerCount() === 1, 5_000, 'admitted');
    v.socket.send('{"stop": true}');
    const closing = await v.closed;
    expect(closing.code).toBe(1008);
    expect(closing.reason).toMatch(/^E_VIEW_READ_ONLY/);
  });
});
