// Label values the metrics may use, kept to bounded sets so that a large run cannot grow a
// scraper's series without limit: a client id becomes its own label only below a fixed count.

/** Clients with ids below this get a series of their own; the rest share client="other". */
export const CLIENT_LABELS_MAX = 256;

export const OTHER_CLIENTS_LABEL = 'other';

/** The `client` label value of a client id. */
export function clientLabel(clientId: number): string {
  return clientId < CLIENT_LABELS_MAX ? String(clientId) : OTHER_CLIENTS_LABEL;
}
