// The live view in a real headless Chromium (playwright-core driving /usr/bin/chromium) during a
// real distributed run (a coordinator and four worker processes over 127.0.0.1): the round
// counter and the curve advance, a killed worker's clients turn "lost" on the tiles, and the
// final state shows outcome.json's figures. The page requests nothing but itself and its feed.
// The last screenshot is kept in test-artifacts/live-view.png (gitignored).

import { afterAll, describe, expect, it } from 'vitest';
import { existsSync, mkdirSync, readFileSync, rmSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { chromium, type Browser, type Page } from 'playwright-core';
import { CliProcess, freshDir, repoRoot } from '../integration/cli-process.js';
import { CLIENT_STATES } from '../../server/live-view/client-board.js';
import { CLIENT_STATE_COLOURS } from '../../src/report/palette.js';
import { chromiumArgs, chromiumPath, watchPage } from './chromium.js';

const artefacts = join(repoRoot, 'test-artifacts');
const LOST_DIGIT = String(CLIENT_STATES.indexOf('lost'));

let browser: Browser | null = null;
let cli: CliProcess | null = null;

afterAll(async () => {
  cli?.kill();
  await browser?.close();
});

/** Polls `read` on the page every 50 ms until `accept` holds, for at most `timeoutMs`. */
async function until<T>(
  read: () => Promise<T>,
  accept: (value: T) => boolean,
  timeoutMs: number,
  what: string,
): Promise<T> {
  const started = Date.now();
  for (;;) {
    const value = await read();
    if (accept(value)) return value;
    if (Date.now() - started > timeoutMs)
      throw new Error(`not within ${timeoutMs} ms: ${what} (last: ${String(value)})`);
    await new Promise((resolve) => setTimeout(resolve, 50));
  }
}

const roundShown = (page: Page) => async () => Number(await page.locator('#round').textContent());
const curvePoints = (page: Page) => async () =>
  Number(await page.locator('#curve').getAttribute('data-points'));

/** The colour drawn at the centre of client `id`'s tile, as #RRGGBB. */
async function tileColour(page: Page, id: number): Promise<string> {
  // An expression string: the project compiles without the DOM library.
  return (await page.evaluate(`(() => {
    const canvas = document.getElementById('tiles');
    const cols = Number(canvas.dataset.cols), tile = Number(canvas.dataset.tilePx);
    const ratio = window.devicePixelRatio || 1;
    const x = ((${id} % cols) + 0.5) * tile * ratio, y = (Math.floor(${id} / cols) + 0.5) * tile * ratio;
    const [r, g, b] = canvas.getContext('2d').getImageData(Math.round(x), Math.round(y), 1, 1).data;
    return '#' + [r, g, b].map((v) => v.toString(16).padStart(2, '0')).join('').toUpperCase();
  })()`)) as string;
}

describe('the live view in Chromium', () => {
  it('follows a distributed run: rounds, curve, a lost worker, the final figures', async () => {
    expect(existsSync(chromiumPath), `${chromiumPath} is missing; these tests do not skip`).toBe(
      true,
    );
    const out = freshDir('live-view');
    // Wall clock, 20 ms steps: a round lasts a tenth of a second or two, long enough to watch.
    cli = new CliProcess([
      'run',
      join(repoRoot, 'scenarios/quickstart.yaml'),
      '--out',
      out,
      '--view',
      '0',
      '--tweak',
      'run.workers:4',
      '--tweak',
      'run.rounds:60',
      '--tweak',
      'run.target:0',
      '--tweak',
      'timing.clock:wall',
      '--tweak',
      'timing.stepCostSeconds:0.02',
    ]);
    // Chromium starts while the run does: a page that opens late gets the history first.
    const [launched, listening] = await Promise.all([
      chromium.launch({ executablePath: chromiumPath, args: chromiumArgs }),
      cli.waitForStderr(/live view on (\S+)/, 20_000),
    ]);
    browser = launched;
    const url = listening[1];
    const page = await browser.newPage({ viewport: { width: 1600, height: 1000 } });
    const { requests, consoleErrors } = watchPage(page);
    await page.goto(url, { waitUntil: 'load' });

    const firstRound = await until(roundShown(page), (r) => r >= 2, 20_000, 'round 2 shown');
    const firstPoints = await curvePoints(page)();
    await until(roundShown(page), (r) => r >= firstRound + 3, 10_000, 'the round advancing');
    await until(curvePoints(page), (p) => p > firstPoints, 10_000, 'the curve advancing');

    const hosted = (await cli.waitForStderr(/worker "local-2" hosts clients ([\d, ]+)/, 5_000))[1];
    const lostIds = hosted.split(', ').map(Number);
    process.kill(cli.workerPids()[1], 'SIGKILL');
    const states = await until(
      async () => (await page.locator('#tiles').getAttribute('data-states')) ?? '',
      (s) => lostIds.every((id) => s[id] === LOST_DIGIT),
      10_000,
      `clients ${hosted} lost on the tiles`,
    );
    // Only the killed worker's clients are lost.
    for (let id = 0; id < states.length; id++)
      expect(states[id] === LOST_DIGIT, `client ${id}`).toBe(lostIds.includes(id));
    for (const id of lostIds) expect(await tileColour(page, id)).toBe(CLIENT_STATE_COLOURS.lost);
    const survivor = [...states].findIndex((_, id) => !lostIds.includes(id));
    expect(await tileColour(page, survivor)).not.toBe(CLIENT_STATE_COLOURS.lost);

    const exit = await cli.exit(30_000);
    expect(exit.code, cli.stderr).toBe(0);
    await page.locator('#final.shown').waitFor({ timeout: 5_000 });
    const value = (id: string) => page.locator(`#${id}`).getAttribute('data-value');
    const outcome = JSON.parse(readFileSync(join(out, 'outcome.json'), 'utf8')) as {
      rounds: number;
      stopReason: string;
      suboptimality: { final: number };
      bytes: Record<'payload' | 'encoded' | 'wire', { up: number; down: number }>;
    };
    expect(Number(await value('final-rounds'))).toBe(outcome.rounds);
    expect(Number(await value('final-gap'))).toBe(outcome.suboptimality.final);
    expect(await value('final-stop')).toBe(outcome.stopReason);
    for (const layer of ['payload', 'encoded', 'wire'] as const)
      expect(await value(`final-${layer}`)).toBe(
        `${outcome.bytes[layer].up}/${outcome.bytes[layer].down}`,
      );
    expect(await roundShown(page)()).toBe(outcome.rounds);
    expect(await page.locator('#status').textContent()).toBe(`over: ${outcome.stopReason}`);

    mkdirSync(artefacts, { recursive: true });
    const screenshot = join(artefacts, 'live-view.png');
    await page.screenshot({ path: screenshot, fullPage: true });
    expect(statSync(screenshot).size).toBeGreaterThan(0);
    expect(consoleErrors).toEqual([]);
    const origin = new URL(url).host;
    for (const request of requests) expect(new URL(request).host).toBe(origin);
    rmSync(out, { recursive: true, force: true });
  }, 60_000);
});
