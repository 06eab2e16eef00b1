// A worker's Prometheus metrics, on a registry of their own: the process (prom-client's default
// collectors), the link (messages and bytes each way, modelled link delay) and the work of each
// hosted client (compute seconds, local steps). Every name starts with roundwire_worker_.

import { collectDefaultMetrics, Counter, Gauge, Registry } from 'prom-client';
import {
  MESSAGE_TYPES,
  PROTOCOL_ERROR_CODES,
  type MessageType,
  type ProtocolErrorCode,
} from '../src/protocol/index.js';

export type LinkDirection = 'up' | 'down';

/**
 * Clients with ids below this get a series of their own; the rest share client="other". The same
 * bound as the coordinator's (server/metrics-labels.ts), which client/ may not import.
 */
export const CLIENT_LABELS_MAX = 256;

function clientLabel(clientId: number): string {
  return clientId < CLIENT_LABELS_MAX ? String(clientId) : 'other';
}

const PREFIX = 'roundwire_worker_';
const MISNAMED_DEFAULT_GAUGES = [
  'nodejs_active_handles_total',
  'nodejs_active_requests_total',
  'nodejs_active_resources_total',
];

export class WorkerMetrics {
  readonly registry = new Registry();
  private readonly messages: Counter<'direction' | 'type'>;
  private readonly messageBytes: Counter<'direction'>;
  private readonly linkDelaySeconds: Counter<'direction'>;
  private readonly computeSeconds: Counter<'client'>;
  private readonly localSteps: Counter<'client'>;
  private readonly clientsHosted: Gauge;
  private readonly protocolErrors: Counter<'code'>;

  constructor() {
    const registers = [this.registry];
    collectDefaultMetrics({ register: this.registry, prefix: PREFIX });
    // prom-client names these gauges with _total, which Prometheus's naming rules keep for
    // counters (promtool check metrics rejects them); the other process figures stay.
    for (const name of MISNAMED_DEFAULT_GAUGES)
      this.registry.removeSingleMetric(`${PREFIX}${name}`);
    this.messages = new Counter({
      name: 'roundwire_worker_messages_total',
      help: 'Valid messages by direction (up: to the coordinator) and type.',
      labelNames: ['direction', 'type'],
      registers,
    });
    this.messageBytes = new Counter({
      name: 'roundwire_worker_message_bytes_total',
      help: 'Encoded bytes of the frames sent (up) and received (down).',
      labelNames: ['direction'],
      registers,
    });
    this.linkDelaySeconds = new Counter({
      name: 'roundwire_worker_link_delay_seconds_total',
      help: 'Link seconds the link model charged, by direction.',
      labelNames: ['direction'],
      registers,
    });
    this.computeSeconds = new Counter({
      name: 'roundwire_worker_compute_seconds_total',
      help: 'Seconds of local work by hosted client, as reported to the coordinator.',
      labelNames: ['client'],
      registers,
    });
    this.localSteps = new Counter({
      name: 'roundwire_worker_local_steps_total',
      help: 'Local steps by hosted client.',
      labelNames: ['client'],
      registers,
    });
    this.clientsHosted = new Gauge({
      name: 'roundwire_worker_clients_hosted',
      help: 'Clients this worker hosts.',
      registers,
    });
    this.protocolErrors = new Counter({
      name: 'roundwire_worker_protocol_errors_total',
      help: 'Bad messages received from the coordinator, by error code.',
      labelNames: ['code'],
      registers,
    });
    for (const direction of ['up', 'down'] as const) {
      this.messageBytes.inc({ direction }, 0);
      this.linkDelaySeconds.inc({ direction }, 0);
      for (const type of MESSAGE_TYPES) this.messages.inc({ direction, type }, 0);
    }
    for (const code of PROTOCOL_ERROR_CODES) this.protocolErrors.inc({ code }, 0);
  }

  messageSent(type: MessageType, encodedBytes: number): void {
    this.messages.inc({ direction: 'up', type });
    this.messageBytes.inc({ direction: 'up' }, encodedBytes);
  }

  /** A frame from the coordinator; its type once validated, null when it failed validation. */
  frameReceived(type: MessageType | null, encodedBytes: number): void {
    if (type !== null) this.messages.inc({ direction: 'down', type });
    this.messageBytes.inc({ direction: 'down' }, encodedBytes);
  }

  protocolError(code: ProtocolErrorCode): void {
    this.protocolErrors.inc({ code });
  }

  hosting(clientCount: number): void {
    this.clientsHosted.set(clientCount);
  }

  linkDelay(direction: LinkDirection, seconds: number): void {
    this.linkDelaySeconds.inc({ direction }, seconds);
  }

  clientWorked(clientId: number, computeSeconds: number, stepsTaken: number): void {
    const client = clientLabel(clientId);
    this.computeSeconds.inc({ client }, computeSeconds);
    this.localSteps.inc({ client }, stepsTaken);
  }
}
