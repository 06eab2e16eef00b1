// --view HOST:PORT (or a bare PORT, on 127.0.0.1): where the live view listens.

import { parseHostPort, type HostPort } from '../../runtime/address.js';

export class ViewOptionError extends Error {
  readonly code = 'E_VIEW_OPTION';
}

export const VIEW_HOST_DEFAULT = '127.0.0.1';

/** Throws ViewOptionError when `text` is not HOST:PORT, [IPv6]:PORT or PORT. */
export function parseViewAddress(text: string): HostPort {
  const address = parseHostPort(text, VIEW_HOST_DEFAULT);
  if (address === null)
    throw new ViewOptionError(
      `--view: expected HOST:PORT or PORT (e.g. 127.0.0.1:8080, port 0: any free port), got "${text}"`,
    );
  return address;
}
