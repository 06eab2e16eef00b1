// A server socket that cannot listen: the address is taken, not ours to bind, or not on this
// machine. The person who chose the address can fix it, so it is bad input (exit code 2) named
// in one line, whichever server (--listen, --metrics) it was.

import { CodedError } from '../src/base/coded-error.js';
import { urlHost, type HostPort } from './address.js';

export class ListenError extends CodedError<'E_LISTEN_ADDRESS'> {}

const REASONS: Readonly<Record<string, string>> = {
  EADDRINUSE: 'the address is in use by another process',
  EACCES: 'no permission to listen there (ports below 1024 need privileges)',
  EADDRNOTAVAIL: 'the address is not one of this machine',
};

/** `error` from listen() as a ListenError naming the option and address, when it is one of the known causes; otherwise `error` itself. */
export function listenFailure(error: unknown, optionName: string, address: HostPort): unknown {
  const code = (error as NodeJS.ErrnoException | null)?.code;
  if (code === undefined || !(code in REASONS)) return error;
  return new ListenError(
    'E_LISTEN_ADDRESS',
    `${optionName} ${urlHost(address.host)}:${address.port}: cannot listen: ${REASONS[code]} (${code})`,
  );
}
