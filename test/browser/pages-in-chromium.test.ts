// report.html and compare.html opened in a real headless Chromium (playwright-core driving the
// system's /usr/bin/chromium): every chart is an inline SVG with data marks, the console stays
// clean and the page requests nothing but itself. Screenshots land beside the pages.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { existsSync, mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium, type BrowserContext } from 'playwright-core';
import { runCli } from '../cli/run-cli.js';
import { chromiumArgs, chromiumPath, watchPage } from './chromium.js';

const root = mkdtempSync(join(tmpdir(), 'roundwire-browser-'));
let context: BrowserContext | null = null;

beforeAll(async () => {
  if (!existsSync(chromiumPath))
    throw new Error(
      `${chromiumPath} is missing: install Debian's chromium package (the CI script does); these tests do not skip`,
    );
  const run = await runCli([
    'run',
    'scenarios/quickstart.yaml',
    '--in-process',
    '--tweak',
    'run.rounds:60',
    '--out',
    join(root, 'run'),
  ]);
  expect(run.code, run.stderr).toBe(0);
  const compare = await runCli([
    'compare',
    'scenarios/quickstart.yaml',
    '--ladder',
    'method.name:fedavg/fedlin',
    '--tweak',
    'run.rounds:40',
    '--out',
    join(root, 'compare'),
  ]);
  expect(compare.code, compare.stderr).toBe(0);
  context = await chromium.launchPersistentContext(join(root, 'chromium-profile'), {
    executablePath: chromiumPath,
    args: chromiumArgs,
    headless: true,
    viewport: { width: 1400, height: 1000 },
  });
}, 120_000);

afterAll(async () => {
  await context?.close();
  rmSync(root, { recursive: true, force: true });
});

interface PageCheck {
  requests: string[];
  consoleErrors: string[];
  marksPerSvg: number[];
}

async function openPage(file: string, screenshot: string): Promise<PageCheck> {
  if (context === null) throw new Error('Chromium did not start');
  const page = await context.newPage();
  const { requests, consoleErrors } = watchPage(page);
  await page.goto(pathToFileURL(file).href, { waitUntil: 'load' });
  // data marks: the shapes Vega draws inside its mark groups (lines, rects and symbols are paths)
  // (an expression string: the project compiles without the DOM library)
  const marksPerSvg = (await page.evaluate(
    `[...document.querySelectorAll('figure > svg')].map((svg) => svg.querySelectorAll('g.role-mark path, g.role-mark line').length)`,
  )) as number[];
  await page.screenshot({ path: screenshot, fullPage: true });
  await page.close();
  return { requests, consoleErrors, marksPerSvg };
}

describe('reports in Chromium', () => {
  it('finds Chromium where the tests expect it', () => {
    expect(existsSync(chromiumPath), `${chromiumPath} is missing`).toBe(true);
  });

  it('report.html: six charts with data marks, no console errors, no request but the page', async () => {
    const file = join(root, 'run', 'report.html');
    const screenshot = join(root, 'run', 'report.png');
    const check = await openPage(file, screenshot);
    expect(check.marksPerSvg.length).toBe(6);
    for (const marks of check.marksPerSvg) expect(marks).toBeGreaterThan(0);
    expect(check.consoleErrors).toEqual([]);
    expect(check.requests).toEqual([pathToFileURL(file).href]);
    expect(statSync(screenshot).size).toBeGreaterThan(0);
  });

  it('compare.html: three overlaid charts with data marks, no console errors, no request but the page', async () => {
    const file = join(root, 'compare', 'compare.html');
    const screenshot = join(root, 'compare', 'compare.png');
    const check = await openPage(file, screenshot);
    expect(check.marksPerSvg.length).toBe(3);
    for (const marks of check.marksPerSvg) expect(marks).toBeGreaterThan(0);
    expect(check.consoleErrors).toEqual([]);
    expect(check.requests).toEqual([pathToFileURL(file).href]);
    expect(statSync(screenshot).size).toBeGreaterThan(0);
  });
});
