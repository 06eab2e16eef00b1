// --view's address: HOST:PORT, [IPv6]:PORT, or a bare PORT on 127.0.0.1; anything else is refused
// with E_VIEW_OPTION and a message naming --view and the text given.

import { describe, expect, it } from 'vitest';
import { parseViewAddress, ViewOptionError } from '../../../server/live-view/view-address.js';

describe('parseViewAddress', () => {
  it('reads HOST:PORT, [IPv6]:PORT and a bare PORT (on 127.0.0.1)', () => {
    expect(parseViewAddress('0.0.0.0:8080')).toEqual({ host: '0.0.0.0', port: 8080 });
    expect(parseViewAddress('[::1]:0')).toEqual({ host: '::1', port: 0 });
    expect(parseViewAddress('8080')).toEqual({ host: '127.0.0.1', port: 8080 });
  });

  it('refuses a malformed address, naming --view and the text', () => {
    // RFC 793 section 3.1: a port is a 16-bit field, so 65536 is none.
    for (const text of ['somewhere', '65536', 'host:', ':80']) {
      const refuse = () => parseViewAddress(text);
      expect(refuse).toThrow(ViewOptionError);
      expect(refuse).toThrow(`--view: expected HOST:PORT or PORT`);
      expect(refuse).toThrow(`"${text}"`);
    }
    let caught: unknown = null;
    try {
      parseViewAddress('somewhere');
    } catch (error) {
      caught = error;
    }
    expect((caught as ViewOptionError | null)?.code).toBe('E_VIEW_OPTION');
  });
});
