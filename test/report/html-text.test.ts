// The five characters HTML gives meaning to in text and quoted attributes (HTML Living Standard,
// section 13.1: text, attribute values; the escapes are the named/numeric character references).
import { describe, expect, it } from 'vitest';
import { escapeHtml } from '../../src/report/html-text.js';

describe('escapeHtml', () => {
  it('escapes markup characters and leaves other text alone', () => {
    expect(escapeHtml(`<script>alert("x")</script> & 'y'`)).toBe(
      '&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt; &amp; &#39;y&#39;',
    );
    expect(escapeHtml('fedlin, tau = 5; f - f* < 1e-8')).toBe('fedlin, tau = 5; f - f* &lt; 1e-8');
  });

  it('escapes an ampersand once, so escaping twice shows the first escape as text', () => {
    expect(escapeHtml(escapeHtml('&'))).toBe('&amp;amp;');
  });
});
