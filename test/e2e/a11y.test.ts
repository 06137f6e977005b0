/**
 * Accessibility: axe-core (the general-purpose checker from npm, WCAG 2.x rules) run in the page on every
 * screen, in the dark and the light theme: no serious or critical violations. The scan runs in a context
 * that lets the test inject axe's script past the page's Content-Security-Policy (which the CSP suite
 * checks on its own).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { ROOT, chromiumAvailable, startWebServer, type WebServer, simQuery } from './helpers.ts';
import { SCREENS, finishRun, launch } from './screens-helpers.ts';

const enabled = chromiumAvailable();
const AXE = readFileSync(path.join(ROOT, 'node_modules', 'axe-core', 'axe.min.js'), 'utf8');

interface Violation {
  id: string;
  impact: string | null;
  help: string;
  nodes: { target: string[] }[];
}

async function scan(page: Page): Promise<string[]> {
  const v = await page.evaluate(async () => {
    const axe = (
      window as unknown as { axe: { run(c: Document, o: object): Promise<{ violations: Violation[] }> } }
    ).axe;
    const r = await axe.run(document, { resultTypes: ['violations'] });
    return r.violations.map((x) => ({
      id: x.id,
      impact: x.impact,
      help: x.help,
      nodes: x.nodes.map((n) => ({ target: n.target.map(String) })),
    }));
  });
  return v
    .filter((x) => x.impact === 'serious' || x.impact === 'critical')
    .map(
      (x) =>
        `${x.impact} ${x.id}: ${x.help} (${x.nodes
          .map((n) => n.target.join(' '))
          .slice(0, 3)
          .join('; ')})`,
    );
}

describe.skipIf(!enabled)('accessibility in Chromium', () => {
  let server: WebServer;
  let browser: Browser;
  let page: Page;

  beforeAll(async () => {
    server = await startWebServer();
    browser = await launch();
    const ctx = await browser.newContext({ bypassCSP: true, viewport: { width: 1280, height: 800 } });
    page = await ctx.newPage();
    page.setDefaultTimeout(60_000);
    await page.goto(`${server.url}${simQuery('&unit=ol3-0417')}`);
    await page.waitForSelector('[data-testid="tab-run"]');
    await page.evaluate(AXE);
    await finishRun(page, '0,1');
    await page.click('[data-testid="tab-book"]');
    await page.fill('[data-testid="unit-name"]', 'OL3-0417');
    await page.click('[data-testid="save-run"]');
    await page.waitForSelector('[data-testid="saved-run"]');
  }, 180_000);

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it.each(['dark', 'light'])(
    '%s theme: no serious or critical violations on any screen',
    async (theme) => {
      const current = await page.evaluate(() => document.documentElement.dataset.theme);
      if (current !== theme) await page.click('[data-testid="theme-toggle"]');
      const found: string[] = [];
      for (const s of SCREENS) {
        await page.click(s.open);
        await page.waitForTimeout(200);
        for (const v of await scan(page)) found.push(`${s.id}: ${v}`);
      }
      await page.click('[data-testid="bench-view-open-top"]');
      await page.waitForSelector('[data-testid="bench-view"]');
      for (const v of await scan(page)) found.push(`bench: ${v}`);
      await page.keyboard.press('Escape');
      console.log(`e2e axe (${theme}):`, found.length === 0 ? 'no serious or critical violations' : found);
      expect(found).toEqual([]);
    },
    120_000,
  );
});
