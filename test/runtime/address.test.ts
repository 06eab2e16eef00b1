// The one address parser and loopback check both processes use: HOST:PORT and [IPv6]:PORT
// (RFC 3986 section 3.2.2 brackets an IPv6 literal), ports up to 65535 (RFC 793 section 3.1, a
// 16-bit field), loopback as localhost, ::1 and 127.0.0.0/8 (RFC 1122 section 3.2.1.3).

import { describe, expect, it } from 'vitest';
import { isLoopbackHost, parseHostPort, urlHost } from '../../runtime/address.js';

describe('parseHostPort', () => {
  it('reads HOST:PORT and [IPv6]:PORT', () => {
    expect(parseHostPort('0.0.0.0:7070')).toEqual({ host: '0.0.0.0', port: 7070 });
    expect(parseHostPort('[::1]:0')).toEqual({ host: '::1', port: 0 });
    expect(parseHostPort('example.org:65535')).toEqual({ host: 'example.org', port: 65535 });
  });

  it('reads a bare PORT only when told which host it means', () => {
    expect(parseHostPort('9464')).toBeNull();
    expect(parseHostPort('9464', '127.0.0.1')).toEqual({ host: '127.0.0.1', port: 9464 });
  });

  it('refuses malformed text and ports beyond 65535', () => {
    for (const bad of [
      '',
      'host',
      'host:',
      ':7070',
      '127.0.0.1:65536',
      '::1:80',
      'a]b:80',
      '[::1:80',
    ]) {
      expect(parseHostPort(bad, '127.0.0.1'), bad).toBeNull();
    }
  });
});

describe('isLoopbackHost', () => {
  it('knows localhost, ::1 and 127.0.0.0/8', () => {
    for (const host of ['localhost', '::1', '127.0.0.1', '127.255.0.9'])
      expect(isLoopbackHost(host), host).toBe(true);
  });

  it('treats every other host as reachable from elsewhere', () => {
    for (const host of ['0.0.0.0', '::', '10.0.0.1', '128.0.0.1', '127.example.org', 'example.org'])
      expect(isLoopbackHost(host), host).toBe(false);
  });
});

describe('urlHost', () => {
  it('brackets an IPv6 literal and leaves other hosts alone', () => {
    expect(urlHost('::1')).toBe('[::1]');
    expect(urlHost('127.0.0.1')).toBe('127.0.0.1');
  });
});
