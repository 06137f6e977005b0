/**
 * The Content-Security-Policy of the served page (scripts/web.mjs sends main/security.ts's policy, the
 * desktop app's). Checked the way the CSP Level 3 specification (W3C) defines it: with
 * `script-src 'self'` and no 'unsafe-inline' or 'unsafe-eval', an inline script does not run and
 * `eval` / `new Function` throw EvalError; every blocked load fires `securitypolicyviolation` on the
 * document. A normal run with the simulated oscillator must cause no violation at all.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { chromium, type Browser, type Page } from 'playwright-core';
import { CONTENT_SECURITY_POLICY } from '../../main/security.ts';
import {
  CHROMIUM,
  chromiumArgs,
  chromiumAvailable,
  startWebServer,
  waitForStepRows,
  type WebServer,
  simQuery,
} from './helpers.ts';

const enabled = chromiumAvailable();

/** Collects the page's CSP violations (document events) and CSP console messages from the start. */
async function watchCsp(page: Page): Promise<{ violations(): Promise<string[]>; console: string[] }> {
  const consoleLines: string[] = [];
  page.on('console', (m) => {
    if (/Content Security Policy|Refused to/i.test(m.text())) consoleLines.push(m.text());
  });
  await page.addInitScript(() => {
    const w = window as unknown as { __csp: string[] };
    w.__csp = [];
    document.addEventListener('securitypolicyviolation', (e) =>
      w.__csp.push(`${e.effectiveDirective} ${e.blockedURI}`),
    );
  });
  return {
    violations: () => page.evaluate(() => (window as unknown as { __csp: string[] }).__csp.slice()),
    console: consoleLines,
  };
}

describe.skipIf(!enabled)('Content-Security-Policy in Chromium', () => {
  let server: WebServer;
  let browser: Browser;

  beforeAll(async () => {
    server = await startWebServer();
    browser = await chromium.launch({ executablePath: CHROMIUM, args: chromiumArgs() });
  }, 120_000);

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('serves the desktop policy, and a normal simulator run causes no violation', async () => {
    const page = await browser.newPage({ viewport: { width: 1280, height: 720 } });
    const csp = await watchCsp(page);
    const errors: string[] = [];
    page.on('pageerror', (e) => errors.push(e.message));
    const response = await page.goto(`${server.url}${simQuery('&unit=ol3-0412&plan=0,1,2')}`);
    expect(response?.headers()['content-security-policy']).toBe(CONTENT_SECURITY_POLICY);
    await page.waitForFunction(
      () => Number(document.querySelector('[data-testid="live-hz"]')?.getAttribute('data-hz')) > 0,
      undefined,
      { timeout: 20_000 },
    );
    await page.click('[data-testid="start-run"]');
    await waitForStepRows(page, 2, 30_000);
    // The other tabs too (charts, forms, local storage).
    for (const tab of ['scale-pair', 'drift', 'book', 'run']) await page.click(`[data-testid="tab-${tab}"]`);
    await page.waitForTimeout(300);
    expect(await csp.violations()).toEqual([]);
    expect(csp.console).toEqual([]);
    // A violation inside the engine worker would not reach the document's listener: check there that
    // zod was told not to probe for eval (renderer/src/lib/zod-jitless.ts), the one source there was.
    const jitless = () =>
      (globalThis as unknown as { __zod_globalConfig?: { jitless?: boolean } }).__zod_globalConfig?.jitless;
    expect(await page.evaluate(jitless)).toBe(true);
    const workers = page.workers();
    expect(workers.length).toBeGreaterThan(0);
    for (const w of workers) expect(await w.evaluate(jitless)).toBe(true);
    expect(errors).toEqual([]);
    await page.close();
  }, 60_000);

  it('refuses an inline script and eval', async () => {
    const page = await browser.newPage();
    const csp = await watchCsp(page);
    await page.goto(`${server.url}${simQuery()}`);
    await page.waitForSelector('[data-testid="tab-run"]');

    // An inline <script>: addScriptTag either throws or the script never runs.
    let threw = false;
    try {
      await page.addScriptTag({ content: 'window.__inline = 1' });
    } catch {
      threw = true;
    }
    const inline = await page.evaluate(() => (window as unknown as { __inline?: number }).__inline);
    expect(inline).toBeUndefined();
    // An inline event handler attribute is inline script too.
    await page.evaluate(() => {
      const d = document.createElement('div');
      d.setAttribute('onclick', 'window.__handler = 1');
      document.body.append(d);
      d.click();
    });
    expect(
      await page.evaluate(() => (window as unknown as { __handler?: number }).__handler),
    ).toBeUndefined();

    // String-to-code: eval and the Function constructor throw EvalError (CSP3 "unsafe-eval"). They are
    // called from a timer task, not inside page.evaluate itself, whose own code DevTools lets through.
    const evalResult = await page.evaluate(
      () =>
        new Promise<string[]>((resolve) =>
          setTimeout(() => {
            const out: string[] = [];
            for (const f of [() => eval('1 + 1'), () => new Function('return 1')()]) {
              try {
                out.push(`ran ${String(f())}`);
              } catch (e) {
                out.push((e as Error).name);
              }
            }
            resolve(out);
          }, 0),
        ),
    );
    expect(evalResult).toEqual(['EvalError', 'EvalError']);

    // The listener sees what was refused: proof that the empty list of the run above means something.
    await page.waitForTimeout(200);
    const v = await csp.violations();
    console.log('e2e CSP: addScriptTag threw:', threw, 'violations:', JSON.stringify(v));
    expect(v.some((x) => x.startsWith('script-src-elem'))).toBe(true);
    expect(v.some((x) => x.startsWith('script-src-attr'))).toBe(true);
    expect(v.some((x) => x.startsWith('script-src') && x.endsWith(' eval'))).toBe(true);
    // …and so does the console listener.
    expect(csp.console.some((line) => /Content Security Policy/.test(line))).toBe(true);
    await page.close();
  }, 30_000);
});
