/**
 * The unit book in Chromium (IndexedDB): a run saved from an opened recording survives a reload; a backup
 * downloaded from the book restores every run into an empty browser profile; a deleted record comes back
 * from the trash; and two tabs of one browser profile saving runs of the same unit, each from its own copy,
 * keep both runs. The browser store's interleavings in depth are in test/records-model.test.ts.
 * Counts events with generous waits; nothing here is timed.
 */
import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { chromium, type Browser, type BrowserContext, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { findDemoUnit, planSchedule, renderOscillator } from '../../dsp/sim/index.ts';
import {
  ARTIFACTS,
  CHROMIUM,
  chromiumArgs,
  chromiumAvailable,
  readBookEntries,
  startWebServer,
  waitForStepRows,
  writeWav,
  type WebServer,
  simQuery,
} from './helpers.ts';

const PLAN = [0, 1, 2, 3];
const UNIT_NAME = 'Ostlund Lane VCO 5';
const enabled = chromiumAvailable();

describe.skipIf(!enabled)('the unit book in Chromium', () => {
  let server: WebServer;
  let browser: Browser;
  let wav: string;

  beforeAll(async () => {
    server = await startWebServer();
    browser = await chromium.launch({ executablePath: CHROMIUM, args: chromiumArgs() });
    const unit = findDemoUnit('ol3-0423')!;
    const rec = renderOscillator(
      { ...unit.options, sampleRateHz: 48_000, snrDb: 70 },
      planSchedule(PLAN, { holdSeconds: 2.5 }),
    );
    wav = writeWav('e2e-book.wav', rec.samples, rec.sampleRateHz);
  }, 120_000);

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  async function openBook(context: BrowserContext, errors: string[]): Promise<Page> {
    const page = await context.newPage();
    page.on('pageerror', (e) => errors.push(e.message));
    page.on('dialog', (d) => void d.accept());
    await page.goto(`${server.url}${simQuery(`&unit=ol3-0412&plan=${PLAN.join(',')}`)}`);
    return page;
  }

  /** Opens the recording (so there is a result to save) and goes to the unit book. */
  async function withResult(page: Page): Promise<void> {
    await page.bringToFront(); // a background tab is throttled
    await page.click('[data-testid="tab-run"]').catch(() => undefined);
    await page.setInputFiles('[data-testid="open-wav"]', wav, { timeout: 150_000 });
    await waitForStepRows(page, PLAN.length, 60_000);
    await page.click('[data-testid="tab-book"]');
  }

  async function saveRun(page: Page, label: string): Promise<string> {
    await page.bringToFront();
    const before = await page
      .locator('.unit-form .message')
      .first()
      .innerText({ timeout: 1000 })
      .catch(() => null);
    await page.fill('input[list="run-labels"]', label);
    await page.click('[data-testid="save-run"]');
    const msg = page.locator('.unit-form .message').first();
    await page.waitForFunction(
      (prev) => {
        const m = document.querySelector('.unit-form .message');
        return m !== null && m.textContent !== prev;
      },
      before,
      { timeout: 30_000 },
    );
    return msg.innerText();
  }

  async function runsInBook(page: Page): Promise<string[]> {
    const entries = (await readBookEntries(page)).map(
      (t) => JSON.parse(t) as { unitName: string; runs: { label: string }[] },
    );
    return entries
      .filter((r) => r.unitName === UNIT_NAME)
      .flatMap((r) => r.runs.map((x) => x.label))
      .sort();
  }

  it('save, reload, backup, trash and restore into an empty profile: nothing lost', async () => {
    const errors: string[] = [];
    const context = await browser.newContext({
      acceptDownloads: true,
      viewport: { width: 1280, height: 900 },
    });
    const first = await openBook(context, errors);
    await withResult(first);
    await first.fill('input[placeholder="e.g. OL-3 no. 17"]', UNIT_NAME);
    expect(await saveRun(first, 'before')).toContain('Saved as run “before”');

    // Reload: the record is still there.
    await first.reload();
    await first.click('[data-testid="tab-book"]');
    await first.waitForSelector(`.record-list >> text=${UNIT_NAME}`);
    expect(await runsInBook(first)).toEqual(['before']);
    await first.close();

    const a = await openBook(context, errors);
    await a.click('[data-testid="tab-book"]');
    await a.waitForSelector(`.record-list >> text=${UNIT_NAME}`);

    // Back up the book.
    const [download] = await Promise.all([
      a.waitForEvent('download'),
      a.click('[data-testid="book-backup"]'),
    ]);
    const backupFile = path.join(mkdtempSync(path.join(tmpdir(), 'spanmeter-e2e-book-')), 'backup.json');
    await download.saveAs(backupFile);
    expect(JSON.parse(readFileSync(backupFile, 'utf8')).format).toBe('spanmeter-unit-book');
    await a.screenshot({ path: path.join(ARTIFACTS, 'book-1280x900.png'), fullPage: true });

    // Delete the record: it goes to the trash, and comes back from there.
    // The overview asks before it deletes (one click to ask, one to confirm).
    await a.click(`[aria-label="Delete the record of ${UNIT_NAME}"]`);
    await a.click('[data-testid="unit-overview"] .confirm button.danger');
    await a.waitForSelector('[data-testid="book-trash"]');
    await a.click(`[data-testid="book-trash"] li:has-text("${UNIT_NAME}") button:has-text("Restore")`);
    await a.waitForSelector(`.record-list >> text=${UNIT_NAME}`);
    expect(await runsInBook(a)).toEqual(['before']);

    // Restore the backup into an empty browser profile: every run is there.
    const fresh = await browser.newContext({ viewport: { width: 1280, height: 900 } });
    const c = await openBook(fresh, errors);
    await c.click('[data-testid="tab-book"]');
    await c.setInputFiles('[data-testid="book-restore-file"]', backupFile);
    await c.waitForSelector('[data-testid="book-message"]:has-text("Restored")');
    expect(await c.innerText('[data-testid="book-message"]')).toContain('1 record added');
    await c.waitForSelector(`.record-list >> text=${UNIT_NAME}`);
    expect(await runsInBook(c)).toEqual(['before']);
    // Restoring the same backup again changes nothing.
    await c.setInputFiles('[data-testid="book-restore-file"]', backupFile);
    await c.waitForSelector('[data-testid="book-message"]:has-text("already the same")');
    expect(await runsInBook(c)).toEqual(['before']);

    expect(errors).toEqual([]);
    await context.close();
    await fresh.close();
  }, 480_000);

  it('two tabs saving runs of the same unit, each from its own copy: both runs kept, nothing lost', async () => {
    const errors: string[] = [];
    const context = await browser.newContext({ viewport: { width: 1280, height: 900 } });
    const unit = 'Ostlund Lane VCO 6';
    // Tab A opens the recording and saves a first run; tab B was opened before that save, so the copy of
    // the unit it saves against is out of date (the store merges a save that only adds runs).
    const a = await openBook(context, errors);
    const b = await openBook(context, errors);
    await withResult(a);
    await a.fill('input[placeholder="e.g. OL-3 no. 17"]', unit);
    expect(await saveRun(a, 'tab A')).toContain('Saved as run “tab A”');
    // Tab A is closed before tab B works: two real-time pages at once starve each other on a small machine.
    await a.close();
    await withResult(b);
    await b.fill('input[placeholder="e.g. OL-3 no. 17"]', unit);
    const said = await saveRun(b, 'tab B');
    expect(said).toContain('“tab B”');
    // After a reload both runs are there.
    await b.reload();
    await b.click('[data-testid="tab-book"]');
    await b.waitForSelector(`.record-list >> text=${unit}`);
    const runs = (await readBookEntries(b))
      .map((t) => JSON.parse(t) as { unitName: string; runs: { label: string }[] })
      .filter((r) => r.unitName === unit)
      .flatMap((r) => r.runs.map((x) => x.label))
      .sort();
    expect(runs).toEqual(['tab A', 'tab B']);
    expect(errors).toEqual([]);
    await context.close();
  }, 480_000);
});
