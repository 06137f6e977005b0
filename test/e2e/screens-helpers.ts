/**
 * Helpers of the screen tests (layout, accessibility, records, bench checks): one browser per file, a
 * page on the simulator, a finished run of a given plan, and reading the figures the page shows.
 */
import { execFileSync } from 'node:child_process';
import { existsSync, mkdirSync } from 'node:fs';
import path from 'node:path';
import { chromium, type Browser, type Page } from 'playwright-core';
import { ARTIFACTS, CHROMIUM, chromiumArgs, simQuery } from './helpers.ts';

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
  query = simQuery(),
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

/** The screens every layout and accessibility check visits, and how to reach each. */
export const SCREENS = [
  { id: 'run', open: '[data-testid="tab-run"]' },
  { id: 'scale-pair', open: '[data-testid="tab-scale-pair"]' },
  { id: 'drift', open: '[data-testid="tab-drift"]' },
  { id: 'book', open: '[data-testid="tab-book"]' },
] as const;

/** A control the user cannot reach: outside the viewport even after scrolling to it. */
export interface Unreachable {
  readonly what: string;
  readonly rect: readonly number[];
}

/**
 * Scrolls to every visible control (buttons, fields, links, disclosures) and lists those that still lie
 * outside the viewport. Controls hidden on purpose (a closed disclosure, the print-only report, the
 * file input behind "Open WAV…") are left out.
 */
export function unreachableControls(page: Page): Promise<Unreachable[]> {
  return page.evaluate(() => {
    const sel =
      'button, input:not([type="hidden"]), select, textarea, a[href], summary, [tabindex]:not([tabindex="-1"])';
    const out: { what: string; rect: number[] }[] = [];
    // A closed <details> keeps its controls laid out but out of reach until opened: open every one, so the
    // controls inside are checked where they really appear, and close them again afterwards.
    const closed = Array.from(document.querySelectorAll<HTMLDetailsElement>('details:not([open])'));
    for (const d of closed) d.open = true;
    for (const el of Array.from(document.querySelectorAll<HTMLElement>(sel))) {
      if (el.closest('.print-report')) continue;
      const st = getComputedStyle(el);
      if (st.display === 'none' || st.visibility === 'hidden') continue;
      if (el.offsetParent === null && st.position !== 'fixed') continue;
      el.scrollIntoView({ block: 'center', inline: 'center' });
      const r = el.getBoundingClientRect();
      if (r.width === 0 || r.height === 0) continue;
      if (r.left < -1 || r.top < -1 || r.right > window.innerWidth + 1 || r.bottom > window.innerHeight + 1) {
        const what = `${el.tagName.toLowerCase()} ${el.getAttribute('data-testid') ?? el.getAttribute('aria-label') ?? el.textContent?.trim().slice(0, 30) ?? ''}`;
        out.push({ what, rect: [r.left, r.top, r.right, r.bottom].map(Math.round) });
      }
    }
    for (const d of closed) d.open = false;
    window.scrollTo(0, 0);
    return out;
  });
}

/** Page width beyond the viewport, px (0 when there is no horizontal scrolling). */
export function horizontalOverflow(page: Page): Promise<number> {
  return page.evaluate(() => document.documentElement.scrollWidth - document.documentElement.clientWidth);
}
