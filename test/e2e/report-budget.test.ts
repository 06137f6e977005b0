/**
 * The uncertainty budget in a saved run's printed report and CSV, in Chromium: a run on the simulator is
 * saved, reopened from the unit book, printed to PDF (page.pdf, as the browser's print would) and the PDF
 * rendered to PNG with pdftoppm (Debian's poppler-utils) for a look; its text (pdftotext) must hold the
 * budget table with u_c, k and U per quantity, the named contributions, and uncertainties at two
 * significant digits (JCGM 100:2008 §7.2.6). The CSV export of the same run carries the step budgets
 * (read back with papaparse, a general-purpose CSV parser from npm).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, Download, Page } from 'playwright-core';
import Papa from 'papaparse';
import { execFileSync } from 'node:child_process';
import { readFileSync, statSync } from 'node:fs';
import path from 'node:path';
import { CSV_STEP_COLUMNS } from '../../renderer/src/lib/export.ts';
import { ROOT, chromiumAvailable, startWebServer, type WebServer, simQuery } from './helpers.ts';
import { SHOTS, finishRun, launch, programAvailable } from './screens-helpers.ts';

/** axe-core, the general-purpose accessibility checker from npm (WCAG 2.x rules). */
const AXE = readFileSync(path.join(ROOT, 'node_modules', 'axe-core', 'axe.min.js'), 'utf8');

/** Serious and critical axe violations on the page, one line each. */
async function axeProblems(page: Page): Promise<string[]> {
  await page.evaluate(AXE);
  return page.evaluate(async () => {
    type V = {
      id: string;
      impact: string | null;
      nodes: { target: unknown[]; failureSummary?: string }[];
    };
    const axe = (window as unknown as { axe: { run(d: Document, o: object): Promise<{ violations: V[] }> } })
      .axe;
    const r = await axe.run(document, { resultTypes: ['violations'] });
    return r.violations
      .filter((v) => v.impact === 'serious' || v.impact === 'critical')
      .map(
        (v) =>
          `${document.documentElement.dataset.theme ?? ''} theme, ${v.impact} ${v.id}: ${v.nodes
            .map((n) => `${n.target.join(' ')} (${(n.failureSummary ?? '').replace(/\s+/g, ' ')})`)
            .join('; ')}`,
      );
  });
}

const enabled = chromiumAvailable();

async function downloadText(page: Page, testId: string): Promise<string> {
  const [d]: [Download, void] = await Promise.all([
    page.waitForEvent('download'),
    page.click(`[data-testid="${testId}"]`),
  ]);
  return readFileSync(await d.path(), 'utf8');
}

describe.skipIf(!enabled)('the uncertainty budget in the report, in Chromium', () => {
  let server: WebServer;
  let browser: Browser;

  beforeAll(async () => {
    server = await startWebServer();
    browser = await launch();
  }, 120_000);

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('prints and exports a saved run with its budget per step, scale and 0 V pitch', async () => {
    // The invented Ostlund Lane unit OL3-0417 (a scale 4.2 cents per octave wide), on the simulator.
    // A context that lets axe's script past the page's Content-Security-Policy (as the a11y suite does).
    const ctx = await browser.newContext({ bypassCSP: true, viewport: { width: 1280, height: 800 } });
    const page = await ctx.newPage();
    page.setDefaultTimeout(60_000);
    // window.print() opens no dialog in a test: the report is printed with page.pdf() instead.
    await page.addInitScript(() => {
      window.print = () => undefined;
    });
    await page.goto(`${server.url}${simQuery('&unit=ol3-0417')}`);
    await page.waitForSelector('[data-testid="tab-run"]');
    await finishRun(page, '0,1,2,3,4');
    await page.click('[data-testid="tab-book"]');
    await page.fill('[data-testid="unit-name"]', 'OL3-0417');
    await page.fill('[data-testid="unit-serial"]', 'OLW-0417');
    await page.fill('[data-testid="run-label"]', 'before trim');
    await page.click('[data-testid="save-run"]');
    await page.waitForSelector('[data-testid="records-message"]:has-text("Saved as run")');
    await page.reload();
    await page.click('[data-testid="tab-book"]');
    await page.click('[data-testid="open-unit"]:has-text("OL3-0417")');
    await page.click('[data-testid="run-item"]:nth-child(1) [data-testid="view-run"]');
    await page.waitForSelector('[data-testid="saved-run"]');

    // The saved run's budget on screen, behind its heading.
    await page.click('[data-testid="saved-budget"] summary');
    const shown = await page.$$eval('[data-testid="saved-budget"] [data-testid="budget-row"]', (els) =>
      els.map((e) => e.getAttribute('data-key')),
    );
    expect(shown).toEqual(['scale', 'pitch-at-0v', 'step-1', 'step-2', 'step-3', 'step-4', 'step-5']);
    // Scroll the work panel (not the window) to the budget, as the wheel would.
    await page.$eval('[data-testid="saved-budget"]', (el) => {
      const panel = el.closest('.right');
      if (panel) panel.scrollTop += el.getBoundingClientRect().top - panel.getBoundingClientRect().top - 40;
    });
    await page.screenshot({ path: path.join(SHOTS, 'book-budget-1280x800.png') });
    // No serious or critical accessibility problem with the budget open, in either theme.
    expect(await axeProblems(page)).toEqual([]);
    await page.click('[data-testid="theme-toggle"]');
    expect(await axeProblems(page)).toEqual([]);
    await page.screenshot({ path: path.join(SHOTS, 'book-budget-light-1280x800.png') });

    const csv = await downloadText(page, 'export-csv');
    const rows = Papa.parse<string[]>(csv.slice(1), { delimiter: ',', newline: '\r\n' }).data;
    const head = new Map(rows.filter((r) => r.length === 2).map((r) => [r[0], r[1]]));
    expect(Number(head.get('scale_error_coverage_k'))).toBeGreaterThanOrEqual(2);
    expect(Number(head.get('scale_error_expanded_u_cents_per_octave'))).toBeGreaterThan(0);
    expect(Number(head.get('pitch_at_0v_expanded_u_cents'))).toBeGreaterThan(0);
    const at = rows.findIndex((r) => r[0] === 'step');
    expect(rows[at]).toEqual([...CSV_STEP_COLUMNS]);
    const steps = rows.slice(at + 1).filter((r) => r.length > 3);
    expect(steps).toHaveLength(5);
    const col = (n: (typeof CSV_STEP_COLUMNS)[number]) => CSV_STEP_COLUMNS.indexOf(n);
    for (const r of steps) {
      const uc = Number(r[col('budget_combined_u_cents')]);
      const k = Number(r[col('budget_coverage_k')]);
      const U = Number(r[col('budget_expanded_u_cents')]);
      expect(uc, `step ${r[0]}`).toBeGreaterThan(0);
      // U = k·u_c (JCGM 100:2008 §6.2.1), within the rounding to two significant digits.
      expect(Math.abs(U - k * uc) / U, `step ${r[0]}: U ${U}, k ${k}, u_c ${uc}`).toBeLessThan(0.1);
      expect(Number(r[col('budget_u_estimator_cents')])).toBeGreaterThan(0);
    }
    console.log(
      'e2e budget CSV, step rows:',
      JSON.stringify(steps.map((r) => r.slice(0, 1).concat(r.slice(9)))),
    );

    await page.click('[data-testid="print-report"]');
    await page.waitForSelector('[data-testid="print-budget"]', { state: 'attached' });
    const budgetRows = await page.$$eval('.print-report [data-testid="budget-row"]', (els) =>
      els.map((e) => e.getAttribute('data-key')),
    );
    expect(budgetRows).toEqual(['scale', 'pitch-at-0v', 'step-1', 'step-2', 'step-3', 'step-4', 'step-5']);
    const pdf = path.join(SHOTS, 'report-budget.pdf');
    await page.pdf({ path: pdf, format: 'A4', printBackground: true });
    expect(statSync(pdf).size).toBeGreaterThan(10_000);
    if (programAvailable('pdftoppm', 'poppler-utils')) {
      execFileSync('pdftoppm', ['-png', '-r', '90', pdf, path.join(SHOTS, 'report-budget')]);
      expect(statSync(path.join(SHOTS, 'report-budget-1.png')).size).toBeGreaterThan(20_000);
      const text = execFileSync('pdftotext', ['-layout', pdf, '-']).toString();
      for (const s of [
        'Uncertainty budget',
        'Scale error, ¢/oct',
        'Pitch at 0 V, ¢',
        'Step 5, 4.000 V, ¢',
        // Column heads wrap in the PDF's text: their words are checked one by one.
        'estimator',
        'repeatability',
        'reference',
        'OL3-0417',
        'before trim',
      ])
        expect(text, s).toContain(s);
      // Every figure in the budget rows has at most two significant digits (k has two decimals).
      const lines = text.split('\n').filter((l) => /^\s*(Scale error|Pitch at 0 V|Step \d)/.test(l));
      expect(lines.length).toBeGreaterThanOrEqual(7);
      for (const l of lines) {
        const figures = l.replace(/^.*?¢(\/oct)?/, '').match(/\d+(\.\d+)?/g) ?? [];
        for (const f of figures) {
          const sig = f.replace('.', '').replace(/^0+/, '');
          if (/^\d\.\d\d$/.test(f) && Number(f) >= 1.9) continue; // k, two decimals
          expect(sig.length, `${f} in "${l.trim()}"`).toBeLessThanOrEqual(2);
        }
      }
    }
    await ctx.close();
  }, 240_000);
});
