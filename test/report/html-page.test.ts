// The page frame: self-contained (no URL, a CSP that forbids fetches; CSP Level 3, section 6.1
// default-src) and every caller text escaped.
import { describe, expect, it } from 'vitest';
import { figure, heading, page, paragraph, section, table } from '../../src/report/html-page.js';

describe('html page', () => {
  it('escapes every text it is given', () => {
    const html = page('<x-t>', [
      heading('<x-h>'),
      paragraph('<x-p>'),
      section('<x-s>', [
        figure('<svg></svg>', '<x-c>', '<x-f>'),
        table(['<x-q>'], [['<x-r>'], [null]], () => '<x-n>'),
      ]),
    ]);
    for (const raw of [
      '<x-t>',
      '<x-h>',
      '<x-p>',
      '<x-s>',
      '<x-c>',
      '<x-f>',
      '<x-q>',
      '<x-r>',
      '<x-n>',
    ])
      expect(html).not.toContain(raw);
    expect(html).toContain('<svg></svg>');
  });

  it('holds no URL and forbids every fetch', () => {
    const html = page('x', [paragraph('y')]);
    expect(html).not.toMatch(/https?:|\/\//);
    expect(html).toContain(`content="default-src 'none'; style-src 'unsafe-inline'"`);
  });
});
