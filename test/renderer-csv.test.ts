/**
 * CSV export: RFC 4180 layout, formula-injection neutralising per the OWASP "CSV Injection" guidance
 * (owasp.org/www-community/attacks/CSV_Injection), checked by reading the text back with papaparse, a
 * general-purpose CSV parser from npm.
 */
import { describe, expect, it } from 'vitest';
import Papa from 'papaparse';
import { csvField, csvTextField, toCsv } from '../renderer/src/lib/csv.ts';
import { calibrate } from '../dsp/calibration/index.ts';
import { runAnalysisOf } from '../renderer/src/lib/analysis.ts';
import { CSV_STEP_COLUMNS } from '../renderer/src/lib/export.ts';
import { SOFTWARE_VERSION, reportToCsv, resultFromAnalysis } from '../renderer/src/ui/results/index.ts';

function parse(text: string): unknown[][] {
  // The file starts with the UTF-8 byte-order mark (the Unicode Standard §23.8); the parser gets the rest.
  expect(text.startsWith('\uFEFF')).toBe(true);
  const r = Papa.parse<unknown[]>(text.slice(1), {
    delimiter: ',',
    newline: '\r\n',
    dynamicTyping: true,
    skipEmptyLines: false,
  });
  expect(r.errors).toEqual([]);
  return r.data;
}

describe('csvTextField', () => {
  // OWASP: cells starting with = + - @ tab or carriage return are prefixed with a single quote and quoted.
  it.each([
    ['=HYPERLINK("http://x","y")', `"'=HYPERLINK(""http://x"",""y"")"`],
    ['+1+2', `"'+1+2"`],
    ['-2+3', `"'-2+3"`],
    ['@SUM(A1)', `"'@SUM(A1)"`],
    ['\tcmd', `"'\tcmd"`],
    ['\rcmd', `"'\rcmd"`],
    // The same after leading white space, and the full-width forms (U+FF1D, U+FF0B, U+FF0D, U+FF20), which
    // some spreadsheets also read as formula starts.
    [' =1+1', `"' =1+1"`],
    ['\u3000+1', `"'\u3000+1"`],
    ['＝1+1', `"'＝1+1"`],
    ['＋cmd', `"'＋cmd"`],
    ['－2', `"'－2"`],
    ['＠SUM(A1)', `"'＠SUM(A1)"`],
  ])('neutralises %j', (input, expected) => {
    expect(csvTextField(input)).toBe(expected);
  });

  // RFC 4180 §2.6–2.7: fields with commas, quotes or line breaks are quoted, quotes doubled.
  it.each([
    ['OL3-0417', 'OL3-0417'],
    ['a,b', '"a,b"'],
    ['say "hi"', '"say ""hi"""'],
    ['two\nlines', '"two\nlines"'],
    ['', ''],
  ])('quotes %j only when needed', (input, expected) => {
    expect(csvTextField(input)).toBe(expected);
  });

  // Text a spreadsheet would coerce stays text (common practice, from memory: Calc and Excel turn "0042"
  // into 42, "3/4" into a date, "TRUE" into a truth value).
  it.each([
    '0042',
    '1e5',
    '3/4',
    '2026-12-02',
    '2026-12-02T16:00:00.000Z',
    '12%',
    'TRUE',
    'false',
    '1,234',
    '09:30',
  ])('keeps %j text', (input) => {
    expect(csvTextField(input)).toBe(`"'${input}"`);
  });

  it.each(['OL3-0417', 'µV', 'Ω trim', 'é', 'VCO 2', 'A4 +3 cents'])(
    'leaves plain text %j alone',
    (input) => {
      expect(csvTextField(input)).toBe(input);
    },
  );

  it('writes numbers as numbers, negative ones too, and non-finite ones as empty', () => {
    expect(csvField(-0.25)).toBe('-0.25');
    expect(csvField(1e-7)).toBe('1e-7');
    expect(csvField(Number.NaN)).toBe('');
    expect(csvField(null)).toBe('');
  });
});

describe('toCsv read back with papaparse', () => {
  it('keeps numbers exact and text harmless', () => {
    const rows = [
      ['name', 'value'],
      ['=1+1', -12.345678901234567],
      ['-cents', 32.70319566257483],
      ['plain, with comma', 0],
      ['multi\r\nline "quoted"', null],
    ];
    const back = parse(toCsv(rows));
    expect(back[1]).toEqual(["'=1+1", -12.345678901234567]);
    expect(back[2]).toEqual(["'-cents", 32.70319566257483]);
    expect(back[3]).toEqual(['plain, with comma', 0]);
    expect(back[4]).toEqual(['multi\r\nline "quoted"', null]);
  });

  it('reportToCsv: header lines about the unit, then the step table with numbers intact', () => {
    const steps = [
      { nominalVolts: 0, hz: 32.66, uncertaintyCents: 0.0012 },
      { nominalVolts: 1, hz: 65.2, uncertaintyCents: 0.0011 },
      { nominalVolts: 2, hz: 130.5, uncertaintyCents: 0.0015, measuredVolts: 1.998 },
    ];
    const a = runAnalysisOf(
      calibrate(
        steps.map((s, i) => ({
          index: i,
          volts: s.nominalVolts,
          measuredVolts: s.measuredVolts ?? null,
          rawHz: s.hz,
          uncertaintyCents: s.uncertaintyCents,
        })),
      ),
    );
    const text = reportToCsv({
      result: resultFromAnalysis(a),
      unitName: '=cmd|"/c calc"!A1',
      serial: '@OL3',
      label: null,
      takenAt: null,
      roomTempC: 21.5,
      meterUsed: null,
      warmUpMinutes: null,
      notes: 'line one\nline two',
      planVolts: steps.map((x) => x.nominalVolts),
      toleranceCents: 2,
      saved: false,
      softwareVersion: SOFTWARE_VERSION,
    });
    expect(text.endsWith('\r\n')).toBe(true);
    const back = parse(text);
    const head = new Map(
      back
        .slice(
          0,
          back.findIndex((r) => r.length <= 1),
        )
        .map((r) => [r[0], r]),
    );
    expect(head.get('unit')).toEqual(['unit', `'=cmd|"/c calc"!A1`]);
    expect(head.get('serial')).toEqual(['serial', "'@OL3"]);
    expect(head.get('notes')).toEqual(['notes', 'line one\nline two']);
    expect(head.get('room_temp_c')).toEqual(['room_temp_c', 21.5]);
    const header = back.findIndex((r) => r[0] === 'step');
    expect(back[header]).toEqual([...CSV_STEP_COLUMNS]);
    const table = back.slice(header + 1).filter((r) => r.length > 1);
    expect(table).toHaveLength(3);
    expect(table[0].slice(0, 5)).toEqual([1, 0, null, 32.66, 0.0012]);
    expect(table[2][2]).toBe(1.998);
    // centsFromIdeal of step 2: 1200·log2(65.4/32.66) − 1200·1 (A. J. Ellis's cents), negative and a number.
    expect(table[1][7]).toBeCloseTo(1200 * Math.log2(65.2 / 32.66) - 1200, 12);
    expect(typeof table[1][7]).toBe('number');
    expect(table[1][7] as number).toBeLessThan(0);
  });
});
