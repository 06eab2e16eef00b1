// Debian's Chromium as the browser tests drive it: where it is, how it starts (headless, and
// nothing of its own on the network), and what a page requested and complained about.

import type { Page } from 'playwright-core';

export const chromiumPath = '/usr/bin/chromium';

export const chromiumArgs = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-quic',
  '--no-first-run',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
];

/** Every URL the page requests and every error it logs or throws, from now on. */
export function watchPage(page: Page): { requests: string[]; consoleErrors: string[] } {
  const requests: string[] = [];
  const consoleErrors: string[] = [];
  page.on('request', (request) => requests.push(request.url()));
  page.on('console', (message) => {
    if (message.type() === 'error') consoleErrors.push(message.text());
  });
  page.on('pageerror', (error) => consoleErrors.push(error.message));
  return { requests, consoleErrors };
}
