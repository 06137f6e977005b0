// The CSV export opened in a real spreadsheet: LibreOffice Calc, headless (Debian's libreoffice-calc-nogui,
// installed by .ci/run). The export is imported as UTF-8 CSV and saved as flat OpenDocument (ODF 1.2,
// OASIS), whose XML names every cell's type and value: no cell may hold a formula, every text cell is text
// with exactly the characters written (the guarding apostrophe of OWASP "CSV Injection" included), and
// every number is a number equal to the one written at the spreadsheet's precision of 15 significant
// digits (IEEE 754 doubles shown to 15 digits, as Calc does).
//
// LibreOffice 7.4 headless reads a CSV as Latin-1 unless told otherwise, byte-order mark or not, so the
// import names UTF-8; the mark is checked to be consumed, not shown as "ï»¿".
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { toCsv, type CsvCell } from '../../renderer/src/lib/csv.ts';

function findSoffice(): string | null {
  for (const name of ['soffice', 'libreoffice']) {
    if (spawnSync('which', [name]).status === 0) return name;
  }
  return null;
}

const soffice = findSoffice();
if (soffice === null && process.env.CI === 'true') {
  throw new Error('LibreOffice (soffice) is missing; .ci/run installs libreoffice-calc-nogui');
}

/** Text cells: what a user might type into a unit's name or notes, hostile or only awkward. */
const TEXTS = [
  '=1+1',
  '+1+2',
  '-2+3',
  '@SUM(A1:A2)',
  ' =1+1',
  '\u3000+1',
  '＝1+1',
  '＋1',
  '－1',
  '＠SUM(A1)',
  '=HYPERLINK("http://example.invalid","x")',
  '0042',
  '1e5',
  '3/4',
  '2026-12-02',
  '12%',
  'TRUE',
  '1,234',
  'OL3-0417',
  'µV Ω é ünit',
  'say "hi", then go',
  'line one\nline two',
];
const NUMBERS = [-12.345678901234567, 32.70319566257483, 1e-7, 0, -0.25, 123456789.123, 1.2e22];

/** Cell texts and types from a flat ODS file: one entry per cell, row by row. */
function cellsOf(fods: string): { type: string; value: string | null; text: string; formula: boolean }[] {
  const table = fods.slice(fods.indexOf('<table:table '), fods.indexOf('</table:table>'));
  const unescape = (s: string) =>
    s
      .replace(/<text:s text:c="(\d+)"\/>/g, (_m, n: string) => ' '.repeat(Number(n)))
      .replace(/<text:s\/>/g, ' ')
      .replace(/<text:tab\/>/g, '\t')
      .replace(/<text:line-break\/>/g, '\n')
      .replace(/<[^>]+>/g, '')
      .replace(/&apos;/g, "'")
      .replace(/&quot;/g, '"')
      .replace(/&lt;/g, '<')
      .replace(/&gt;/g, '>')
      .replace(/&amp;/g, '&');
  const out: { type: string; value: string | null; text: string; formula: boolean }[] = [];
  for (const m of table.matchAll(/<table:table-cell([^>]*?)(?:\/>|>([\s\S]*?)<\/table:table-cell>)/g)) {
    const attrs = m[1];
    const paragraphs = [...(m[2] ?? '').matchAll(/<text:p>([\s\S]*?)<\/text:p>/g)].map((p) => unescape(p[1]));
    out.push({
      type: /office:value-type="([^"]+)"/.exec(attrs)?.[1] ?? 'empty',
      value: /office:value="([^"]+)"/.exec(attrs)?.[1] ?? null,
      text: paragraphs.join('\n'),
      formula: /table:formula=/.test(attrs),
    });
  }
  return out;
}

describe('CSV export in LibreOffice Calc', () => {
  it.skipIf(soffice === null)(
    'no formula evaluated; every text and number intact',
    () => {
      const dir = mkdtempSync(join(tmpdir(), 'spanmeter-csv-'));
      try {
        const rows: CsvCell[][] = TEXTS.map((t, i) => [t, NUMBERS[i % NUMBERS.length]]);
        const csv = join(dir, 'export.csv');
        writeFileSync(csv, toCsv(rows), 'utf8');
        expect(readFileSync(csv).subarray(0, 3)).toEqual(Buffer.from([0xef, 0xbb, 0xbf])); // UTF-8 BOM
        const r = spawnSync(
          soffice!,
          [
            '--headless',
            '--norestore',
            `-env:UserInstallation=file://${join(dir, 'profile')}`,
            // Comma, double quote, UTF-8 (76), from line 1 (the CSV filter's option string).
            '--infilter=Text - txt - csv (StarCalc):44,34,76,1',
            '--convert-to',
            'fods',
            '--outdir',
            dir,
            csv,
          ],
          { encoding: 'utf8', timeout: 240_000 },
        );
        expect(r.status, r.stderr).toBe(0);
        const cells = cellsOf(readFileSync(join(dir, 'export.fods'), 'utf8'));
        expect(cells).toHaveLength(2 * rows.length);
        rows.forEach(([text, number], i) => {
          const t = cells[2 * i];
          const n = cells[2 * i + 1];
          expect(t.formula, `row ${i} text`).toBe(false);
          expect(n.formula, `row ${i} number`).toBe(false);
          expect(t.type, `row ${i}: ${JSON.stringify(text)}`).toBe('string');
          // Guarded cells keep the apostrophe they were written with; all others read back unchanged.
          const written = String(text);
          expect([written, `'${written}`], `row ${i}`).toContain(t.text);
          expect(t.text.includes('ï»¿') || t.text.includes('\uFEFF'), `row ${i}: BOM shown`).toBe(false);
          expect(n.type, `row ${i} number`).toBe('float');
          const back = Number(n.value);
          const want = number as number;
          expect(Math.abs(back - want), `row ${i}: ${n.value} vs ${want}`).toBeLessThanOrEqual(
            Math.abs(want) * 1e-14,
          );
        });
        // The guarded texts are exactly those a spreadsheet would otherwise turn into formulas or numbers.
        const guarded = TEXTS.filter((_t, i) => cells[2 * i].text.startsWith("'"));
        expect(guarded).toEqual(
          TEXTS.filter(
            (t) => !['OL3-0417', 'µV Ω é ünit', 'say "hi", then go', 'line one\nline two'].includes(t),
          ),
        );
      } finally {
        rmSync(dir, { recursive: true, force: true });
      }
    },
    300_000,
  );

  it.skipIf(soffice !== null)('is skipped: LibreOffice (soffice) is not installed', () => {
    console.warn('csv-spreadsheet: soffice not found; install libreoffice-calc-nogui to run this check');
  });
});
