/**
 * The layout on real screens: at 800×600, 1280×800 and 1920×1080, on every screen (Span run with a
 * finished run, Scale pair, Hold & drift, Unit book with a saved run, the bench view), the page never
 * scrolls sideways and every control is inside the viewport or reachable by scrolling to it. Open WAV…
 * is reached with the Tab key. Screenshots go to test-artifacts/screens/ for the note.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
import path from 'node:path';
import { chromiumAvailable, startWebServer, type WebServer, simQuery } from './helpers.ts';
import {
  SCREENS,
  SHOTS,
  finishRun,
  horizontalOverflow,
  launch,
  openApp,
  unreachableControls,
} from './screens-helpers.ts';

const enabled = chromiumAvailable();
const SIZES = [
  { width: 800, height: 600 },
  { width: 1280, height: 800 },
  { width: 1920, height: 1080 },
] as const;

describe.skipIf(!enabled)('layout in Chromium', () => {
  let server: WebServer;
  let browser: Browser;
  let page: Page;

  beforeAll(async () => {
    server = await startWebServer();
    browser = await launch();
    page = await openApp(browser, server.url, { width: 1280, height: 800 }, simQuery('&unit=ol3-0417'));
    await finishRun(page, '0,1,2');
    await page.click('[data-testid="tab-book"]');
    await page.fill('[data-testid="unit-name"]', 'OL3-0417');
    await page.click('[data-testid="save-run"]');
    await page.waitForSelector('[data-testid="saved-run"]');
  }, 180_000);

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it.each(SIZES)(
    '$width×$height: no sideways scrolling, every control reachable',
    async (size) => {
      await page.setViewportSize(size);
      const problems: string[] = [];
      for (const s of SCREENS) {
        await page.click(s.open);
        await page.waitForTimeout(200);
        const over = await horizontalOverflow(page);
        if (over > 0) problems.push(`${s.id}: page is ${over} px wider than the window`);
        for (const u of await unreachableControls(page))
          problems.push(`${s.id}: ${u.what} at ${u.rect.join(',')}`);
        await page.screenshot({ path: path.join(SHOTS, `${s.id}-${size.width}x${size.height}.png`) });
      }
      await page.click('[data-testid="tab-run"]');
      await page.click('[data-testid="bench-view-open-top"]');
      await page.waitForSelector('[data-testid="bench-view"]');
      if ((await horizontalOverflow(page)) > 0) problems.push('bench view scrolls sideways');
      for (const u of await unreachableControls(page))
        problems.push(`bench: ${u.what} at ${u.rect.join(',')}`);
      await page.screenshot({ path: path.join(SHOTS, `bench-${size.width}x${size.height}.png`) });
      await page.keyboard.press('Escape');
      await page.waitForSelector('[data-testid="bench-view"]', { state: 'detached' });
      expect(problems).toEqual([]);
    },
    90_000,
  );

  it('Open WAV… and Start run are reached with the Tab key', async () => {
    await page.setViewportSize({ width: 1280, height: 800 });
    await page.click('[data-testid="tab-run"]');
    await page.evaluate(() => (document.activeElement as HTMLElement | null)?.blur());
    const reached = new Set<string>();
    for (let i = 0; i < 80 && !(reached.has('open-wav-button') && reached.has('start-run')); i++) {
      await page.keyboard.press('Tab');
      const id = await page.evaluate(() => document.activeElement?.getAttribute('data-testid') ?? '');
      if (id) reached.add(id);
    }
    expect([...reached]).toContain('open-wav-button');
    expect([...reached]).toContain('start-run');
  }, 60_000);
});
