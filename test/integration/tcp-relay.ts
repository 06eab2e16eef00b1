// A TCP relay in front of a coordinator on 127.0.0.1, so that a test can cut a worker's link
// (both sides of every connection at once) without touching either process.

import { once } from 'node:events';
import {
  createConnection,
  createServer,
  type AddressInfo,
  type Server,
  type Socket,
} from 'node:net';

export /**
 * Forwards TCP connections to the coordinator; cut() destroys both sides of every one, and
 * while `refusing` a new connection is destroyed as it arrives.
 */
class Relay {
  private readonly server: Server;
  private readonly sockets = new Set<Socket>();
  connections = 0;
  refusing = false;

  constructor(targetPort: number) {
    this.server = createServer((inbound) => {
      if (this.refusing) {
        inbound.destroy();
        return;
      }
      this.connections++;
      const outbound = createConnection({ host: '127.0.0.1', port: targetPort });
      for (const socket of [inbound, outbound]) {
        this.sockets.add(socket);
        socket.once('close', () => this.sockets.delete(socket));
        // A cut shows as a reset on the other side; nothing to report here.
        socket.on('error', () => undefined);
      }
      inbound.pipe(outbound);
      outbound.pipe(inbound);
      inbound.once('close', () => outbound.destroy());
      outbound.once('close', () => inbound.destroy());
    });
  }

  async listen(): Promise<string> {
    this.server.listen(0, '127.0.0.1');
    await once(this.server, 'listening');
    return `ws://127.0.0.1:${(this.server.address() as AddressInfo).port}`;
  }

  cut(): void {
    for (const socket of this.sockets) socket.destroy();
  }

  /** Refuses new connections from now on and cuts the open ones. */
  async close(): Promise<void> {
    const closed = new Promise((resolve) => this.server.close(resolve));
    this.cut();
    await closed;
  }
}
