/**
 * Helpers of the screen tests (layout, accessibility, records, bench checks): one browser per file, a
 * page on the simulator, a finished run of a given plan, and reading the figures the page shows.
 */
import { execFileSync } from 'node:child_process';
import { existsSync, mkdirSync } from 'node:fs';
import path from 'node:path';
import { chromium, type Browser, type Page } from 'playwright-core';
import { ARTIFACTS, CHROMIUM, chromiumArgs } from './helpers.ts';

export const SHOTS = path.join(ARTIFACTS, 'screens');

/** Launches Debian's Chromium as the other browser tests do. */
export function launch(): Promise<Browser> {
  mkdirSync(SHOTS, { recursive: true });
  return chromium.launch({ executablePath: CHROMIUM, args: chromiumArgs() });
}

/** Opens the app on the simulator with a plan and waits for it to be ready. */
export async function openApp(
  browser: Browser,
  url: string,
  viewport = { width: 1280, height: 800 },
  query = '?input=sim',
): Promise<Page> {
  const page = await browser.newPage({ viewport });
  // Generous: the page shares a small machine with other suites (waits count events, never time them).
  page.setDefaultTimeout(60_000);
  // window.print() opens no dialog in a test: the report is printed with page.pdf() instead.
  await page.addInitScript(() => {
    window.print = () => undefined;
  });
  await page.goto(`${url}${query}`);
  await page.waitForSelector('[data-testid="tab-run"]');
  return page;
}

/** Starts a run of the typed plan on the simulator and waits until every step is captured. */
export async function finishRun(page: Page, plan: string, timeoutMs = 90_000): Promise<void> {
  await page.fill('[data-testid="plan-text"]', plan);
  await page.click('[data-testid="start-run"]');
  await page.waitForSelector('[data-testid="run-prompt"][data-phase="finished"]', { timeout: timeoutMs });
}

/** The scale error the fit shows, cents per octave (NaN when there is none). */
export async function fitScaleCents(page: Page): Promise<number> {
  const v = await page.getAttribute('[data-testid="fit-scale"]', 'data-cents').catch(() => null);
  return v === null ? NaN : Number(v);
}

/**
 * Whether an outside program is here: true when found; without it the test is skipped with a message,
 * except under CI=true, where a missing program is a failure.
 */
export function programAvailable(name: string, debianPackage: string): boolean {
  try {
    execFileSync('which', [name], { stdio: 'ignore' });
    return true;
  } catch {
    if (process.env.CI === 'true') {
      throw new Error(`${name} is missing: CI must install Debian's ${debianPackage} (see .ci/run)`);
    }
    console.warn(`e2e: ${name} is missing (apt-get install ${debianPackage}); that check is skipped`);
    return false;
  }
}

export { existsSync };
