// Addresses a process listens on, as given on the command line: HOST:PORT or [IPv6]:PORT, and
// whether a host is this machine only. The coordinator's --listen and every --metrics read them
// here, so both processes agree on what an address and loopback are.

import { isIP } from 'node:net';

export interface HostPort {
  host: string;
  /** 0: the OS picks */
  port: number;
}

/** Highest TCP port (RFC 793 section 3.1: a 16-bit field). */
const PORT_MAX = 65535;

/**
 * HOST:PORT or [IPv6]:PORT; a bare PORT only when `bareHost` is given (the host it then means).
 * Null when malformed.
 */
export function parseHostPort(text: string, bareHost: string | null = null): HostPort | null {
  const match = /^(?:(?:\[([^\]]+)\]|([^:[\]]+)):)?(\d{1,5})$/.exec(text);
  if (match === null) return null;
  const host = match[1] ?? match[2] ?? bareHost;
  const port = Number(match[3]);
  if (host === null || port > PORT_MAX) return null;
  return { host, port };
}

/** True when only this machine can reach `host`: localhost, ::1 or 127.0.0.0/8. */
export function isLoopbackHost(host: string): boolean {
  if (host === 'localhost' || host === '::1') return true;
  return isIP(host) === 4 && host.startsWith('127.');
}

/** `host` as it goes into a URL: an IPv6 literal in brackets (RFC 3986 section 3.2.2). */
export function urlHost(host: string): string {
  return host.includes(':') ? `[${host}]` : host;
}
