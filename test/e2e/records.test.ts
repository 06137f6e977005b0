/**
 * Records you can use: save two runs of a unit, reload, choose the older, and export it. The CSV and the
 * JSON must hold that run's own values and metadata (its plan, its date, its label, the unit's serial,
 * room temperature, meter and notes), not the live run's; the printed report, printed to PDF by Chromium
 * and rendered to PNG with pdftoppm (Debian's poppler-utils), must show the same.
 *
 * The two runs are told apart by their plans (0,2 V then 0,1,2 V) and their labels.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, Download, Page } from 'playwright-core';
import Papa from 'papaparse';
import { execFileSync } from 'node:child_process';
import { readFileSync, statSync } from 'node:fs';
import path from 'node:path';
import { chromiumAvailable, startWebServer, type WebServer, simQuery } from './helpers.ts';
import { SHOTS, finishRun, launch, openApp, programAvailable } from './screens-helpers.ts';

const enabled = chromiumAvailable();
const UNIT = {
  name: 'OL3-0417',
  serial: 'OLW-3-0417',
  room: '22,5',
  meter: 'Bench DMM 4½ digits, 20 V range',
  notes: 'Ostlund Lane workshop, batch 3: scale trimmed.',
};

async function downloadText(page: Page, testId: string): Promise<{ name: string; text: string }> {
  const [d]: [Download, void] = await Promise.all([
    page.waitForEvent('download'),
    page.click(`[data-testid="${testId}"]`),
  ]);
  const file = await d.path();
  return { name: d.suggestedFilename(), text: readFileSync(file, 'utf8') };
}

async function save(page: Page, label: string): Promise<void> {
  await page.click('[data-testid="tab-book"]');
  await page.fill('[data-testid="run-label"]', label);
  await page.click('[data-testid="save-run"]');
  await page.waitForSelector(`[data-testid="records-message"]:has-text("Saved as run “${label}”")`);
}

describe.skipIf(!enabled)('records in Chromium', () => {
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

  it('saves two runs, reloads, and exports and prints the older with its own values', async () => {
    const page = await openApp(browser, server.url, { width: 1280, height: 800 }, simQuery('&unit=ol3-0417'));
    await finishRun(page, '0,2');
    await page.click('[data-testid="tab-book"]');
    await page.fill('[data-testid="unit-name"]', UNIT.name);
    await page.fill('[data-testid="unit-serial"]', UNIT.serial);
    await page.fill('[data-testid="unit-room"]', UNIT.room);
    await page.fill('[data-testid="unit-meter"]', UNIT.meter);
    await page.fill('[data-testid="unit-notes"]', UNIT.notes);
    await save(page, 'before');
    await page.click('[data-testid="tab-run"]');
    await finishRun(page, '0,1,2');
    await save(page, 'after');

    await page.reload();
    await page.click('[data-testid="tab-book"]');
    await page.click(`[data-testid="open-unit"]:has-text("${UNIT.name}")`);
    const items = await page.$$('[data-testid="run-item"]');
    expect(items.length).toBe(2);
    // The older run is listed first.
    await page.click('[data-testid="run-item"]:nth-child(1) [data-testid="view-run"]');
    await page.waitForSelector('[data-testid="saved-run"]');
    const shownRows = await page.$$eval('[data-testid="saved-table"] [data-testid="result-row"]', (els) =>
      els.map((e) => Number(e.getAttribute('data-volts'))),
    );
    expect(shownRows).toEqual([0, 2]);
    await page.screenshot({ path: path.join(SHOTS, 'unit-book-saved-run-1280x800.png'), fullPage: true });

    const json = await downloadText(page, 'export-json');
    const j = JSON.parse(json.text);
    expect(j.run.label).toBe('before');
    expect(j.run.plan.volts).toEqual([0, 2]);
    expect(j.result.steps.map((s: { volts: number }) => s.volts)).toEqual([0, 2]); // the one result shape
    expect(j.unit).toMatchObject({
      name: UNIT.name,
      serial: UNIT.serial,
      roomTempC: 22.5,
      meterUsed: UNIT.meter,
      notes: UNIT.notes,
    });
    expect(j.software.version).toMatch(/^\d+\.\d+\.\d+/);
    const takenAt = Date.parse(j.run.takenAt);
    expect(Number.isFinite(takenAt)).toBe(true);
    expect(json.name).toContain('before');

    const csv = await downloadText(page, 'export-csv');
    const rows = Papa.parse<string[]>(csv.text, { delimiter: ',', newline: '\r\n' }).data;
    const head = new Map(rows.filter((r) => r.length === 2).map((r) => [r[0], r[1]]));
    expect(head.get('label')).toBe('before');
    // The date-like text cell carries the spreadsheet guard (lib/csv.ts needsGuard; OWASP "CSV Injection").
    expect(head.get('taken_at')).toBe(`'${j.run.takenAt}`);
    expect(head.get('serial')).toBe(UNIT.serial);
    expect(head.get('room_temp_c')).toBe('22.5');
    expect(head.get('meter')).toBe(UNIT.meter);
    const at = rows.findIndex((r) => r[0] === 'step');
    const csvHz = rows
      .slice(at + 1)
      .filter((r) => r.length > 3)
      .map((r) => Number(r[3]));
    expect(csvHz).toEqual(j.result.steps.map((s: { hz: number }) => s.hz));

    // The printed report of that run: print to PDF, render to PNG, read its text.
    await page.click('[data-testid="print-report"]');
    await page.waitForSelector('[data-testid="print-report"]', { state: 'attached' });
    const pdf = path.join(SHOTS, 'report-before.pdf');
    await page.pdf({ path: pdf, format: 'A4', printBackground: true });
    expect(statSync(pdf).size).toBeGreaterThan(10_000);
    if (programAvailable('pdftoppm', 'poppler-utils')) {
      execFileSync('pdftoppm', [
        '-png',
        '-r',
        '80',
        '-f',
        '1',
        '-l',
        '1',
        pdf,
        path.join(SHOTS, 'report-before'),
      ]);
      expect(statSync(path.join(SHOTS, 'report-before-1.png')).size).toBeGreaterThan(20_000);
      const text = execFileSync('pdftotext', ['-layout', pdf, '-']).toString();
      for (const s of [UNIT.name, UNIT.serial, 'before', '22.5 °C', UNIT.meter, 'Spanmeter', 'Measured']) {
        expect(text).toContain(s);
      }
      expect(text).not.toContain('not saved');
    }
    await page.close();
  }, 240_000);
});
