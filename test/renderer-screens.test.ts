/**
 * The screens' pure parts: the one number-field rule, the meter plausibility question, the plan preview,
 * the saved-run report and its CSV and JSON exports (read back with papaparse, a general-purpose CSV
 * parser from npm), and the verdict against a unit's tolerance.
 */
import { describe, expect, it } from 'vitest';
import Papa from 'papaparse';
import { migrateResult, type CalibrationResult } from '../dsp/calibration/index.ts';
import type { Run, UnitRecord } from '../main/api-types.ts';
import { RECORD_SCHEMA_VERSION } from '../main/ipc-contract.ts';
import { meterQuestion, numberOrNull, parseNumberField } from '../renderer/src/lib/fields.ts';
import { CSV_STEP_COLUMNS } from '../renderer/src/lib/export.ts';
import { setupOptions, setupSummary, DEFAULT_SETUP } from '../renderer/src/lib/setup.ts';
import { parseRunSource } from '../renderer/src/hooks/useRunAutosave.ts';
import { eventForKey, isTypingTarget } from '../renderer/src/hooks/useRunKeys.ts';
import { planPreview } from '../renderer/src/ui/RunPanel.tsx';
import {
  DEFAULT_TOLERANCE_CENTS,
  reportFileName,
  reportOfStored,
  reportToCsv,
  reportToJson,
  trackingBasis,
  verdictFor,
} from '../renderer/src/ui/results/report.ts';
import { resultFromStored } from '../renderer/src/ui/results/model.ts';
import { createRun } from '../dsp/calibration/index.ts';

describe('parseNumberField: one rule for every number typed', () => {
  it.each([
    ['1.002', 1.002],
    ['1,002', 1.002],
    ['  -0,5 ', -0.5],
    ['−12.5', -12.5],
    ['+3', 3],
    ['.5', 0.5],
    [',5', 0.5],
    ['7.', 7],
  ])('%j is %d', (text, value) => {
    expect(parseNumberField(text)).toEqual({ kind: 'ok', value });
  });

  it.each([
    ['1e9', 'write the number out in digits (no exponent)'],
    ['-', 'not a number'],
    ['abc', 'digits only: the unit is already given'],
    ['5 V', 'digits only: the unit is already given'],
    ['1.000,5', 'use one decimal separator and no thousands separators'],
    ['1,000.5', 'use one decimal separator and no thousands separators'],
  ])('%j is invalid with its reason', (text, why) => {
    const p = parseNumberField(text);
    expect(p.kind).toBe('invalid');
    if (p.kind === 'invalid') expect(p.reason).toBe(`“${text.trim()}”: ${why}`);
  });

  it('checks the range and says it with the unit', () => {
    expect(parseNumberField('25', { min: -20, max: 20, unit: 'V' })).toEqual({
      kind: 'invalid',
      reason: 'must be between −20 and 20 V',
    });
    expect(parseNumberField('-1', { min: 0, unit: 'min' })).toEqual({
      kind: 'invalid',
      reason: 'must be at least 0 min',
    });
  });

  it('an empty field is "not set" unless required', () => {
    expect(parseNumberField('  ')).toEqual({ kind: 'empty' });
    expect(parseNumberField('', { optional: false })).toEqual({ kind: 'invalid', reason: 'needs a value' });
    expect(numberOrNull('')).toBeNull();
    expect(numberOrNull('abc')).toBeNull();
  });
});

describe('meterQuestion', () => {
  // Reference voltages need about 0.1 % (docs/facts.md); a reading 3 % or 50 mV off is questioned
  // (common practice, no source).
  it('questions a typo on the 6 V step', () => {
    expect(meterQuestion(1.002, 6)).toBe('Meter reads 1.002 V on the 6 V step: a typo?');
  });
  it.each([
    [6.003, 6],
    [5.9, 6],
    [0.02, 0],
    [-0.04, 0],
  ])('accepts %d V on the %d V step', (m, s) => {
    expect(meterQuestion(m, s)).toBeNull();
  });
  it.each([
    [6.2, 6],
    [0.06, 0],
    [60, 6],
  ])('questions %d V on the %d V step', (m, s) => {
    expect(meterQuestion(m, s)).not.toBeNull();
  });
});

describe('planPreview', () => {
  it('says what the plan parsed', () => {
    expect(planPreview('0,1,2,3,4,5,6,7')).toEqual({ ok: true, text: '8 points, 0 to 7 V, 1 V steps' });
    expect(planPreview('0-7')).toEqual({ ok: true, text: '8 points, 0 to 7 V, 1 V steps' });
    expect(planPreview('7,6,5')).toEqual({
      ok: true,
      text: '3 points, 5 to 7 V, 1 V steps (played high to low)',
    });
    expect(planPreview('0,2,3')).toEqual({ ok: true, text: '3 points, 0 to 3 V, rising' });
  });
  it('says plainly when there are too many points', () => {
    const text = Array.from({ length: 100 }, (_, i) => (i * 0.1).toFixed(1)).join(',');
    expect(planPreview(text)).toEqual({
      ok: false,
      text: 'Too many points: 100 typed, a plan takes at most 64.',
    });
  });
});

describe('setupSummary says only what is in use', () => {
  it('an invalid clock or fit range is named as ignored, never repeated', () => {
    const form = { ...DEFAULT_SETUP, clockPpm: 'abc', fitFromVolts: '7', fitToVolts: '5' };
    const s = setupSummary(form);
    expect(s).not.toContain('abc');
    expect(s).not.toContain('7 to 5');
    expect(s).toContain('ignored');
    expect(setupOptions(form).clockPpm).toBe(0);
  });
  it('a decimal comma reads the same as a point, in numbers and in resistors', () => {
    const o = setupOptions({
      ...DEFAULT_SETUP,
      clockPpm: '12,5',
      topology: 'divider',
      firstOhms: '100k',
      secondOhms: '1,8k',
    });
    expect(o.clockPpm).toBe(12.5);
    expect(o.network).toEqual({ topology: 'divider', seriesOhms: 100_000, shuntOhms: 1800 });
  });
});

describe('run keys and resume source', () => {
  it('Space on a button presses the button, not "capture now"; R anywhere but a text field redoes', () => {
    const button = { tagName: 'BUTTON', isContentEditable: false } as unknown as EventTarget;
    const input = { tagName: 'INPUT', isContentEditable: false } as unknown as EventTarget;
    expect(isTypingTarget(button, ' ')).toBe(true);
    expect(isTypingTarget(button, 'r')).toBe(false);
    expect(isTypingTarget(input, 'r')).toBe(true);
  });
  it('one R action: the warning step while a pitch warning is open', () => {
    const s = createRun({ id: 'x', label: 'x', volts: [0, 1, 2] });
    expect(eventForKey('r', s)).toEqual({ type: 'redo', stepIndex: 0 });
    expect(eventForKey('P', s)).toEqual({ type: 'pause' });
    expect(eventForKey('q', s)).toBeNull();
  });
  it('reads the remembered source of the autosaved run', () => {
    expect(parseRunSource('{"kind":"sim","unitId":"ol3-0417"}')).toEqual({ kind: 'sim', unitId: 'ol3-0417' });
    expect(parseRunSource('{"kind":"device"}')).toEqual({ kind: 'device' });
    expect(parseRunSource('{"kind":"tape"}')).toBeNull();
    expect(parseRunSource('not json')).toBeNull();
    expect(parseRunSource(null)).toBeNull();
  });
});

/** Two runs of an invented Ostlund Lane workshop unit (demo data). */
/** A stored result written in schema 1 shape, read through the one migration (dsp/calibration/result.ts). */
function v2(value: unknown): CalibrationResult {
  const m = migrateResult(value);
  if (m.kind !== 'ok') throw new Error(m.message);
  return m.result;
}

function record(): { rec: UnitRecord; before: Run; after: Run } {
  const step = (volts: number, hz: number, ideal: number, interval: number | null) => ({
    volts,
    hz,
    uncertaintyCents: 0.01,
    centsFromIdeal: ideal,
    intervalErrorCents: interval,
  });
  const before: Run = {
    id: 'run-before-0001',
    takenAt: '2026-11-30T09:15:00.000Z',
    label: 'before',
    plan: { volts: [0, 1, 2] },
    result: v2({
      steps: [step(0, 32.7, 0, null), step(1, 65.54, 4.2, 4.2), step(2, 131.36, 8.4, 4.2)],
      fit: { octavesPerVolt: 1.0035, scaleErrorCentsPerOctave: 4.2, hzAt0V: 32.7, maxResidualCents: 0.01 },
      advice: [{ text: 'Turn the scale trimmer to narrow the span.', trimmer: 'scale', status: 'adjust' }],
    }),
  };
  const after: Run = {
    ...before,
    id: 'run-after-0001',
    takenAt: '2026-11-30T10:40:00.000Z',
    label: 'after',
    result: v2({
      steps: [step(0, 32.7, 0, null), step(1, 65.41, 0.3, 0.3), step(2, 130.82, 0.5, 0.2)],
      fit: { octavesPerVolt: 1.0002, scaleErrorCentsPerOctave: 0.25, hzAt0V: 32.7, maxResidualCents: 0.05 },
      advice: [],
    }),
  };
  const rec: UnitRecord = {
    schemaVersion: RECORD_SCHEMA_VERSION,
    id: 'ol3-0417-abc123',
    unitName: 'OL3-0417',
    serial: 'OLW-0417',
    roomTempC: 22.5,
    meterUsed: 'bench DMM, 20 V range',
    notes: 'Ostlund Lane batch 3',
    createdAt: '2026-11-30T09:00:00.000Z',
    updatedAt: '2026-11-30T10:41:00.000Z',
    runs: [before, after],
  };
  return { rec, before, after };
}

describe('a saved run reported with its own values', () => {
  it('CSV: the run’s own date, label and unit details, then its steps in voltage order', () => {
    const { rec, before } = record();
    const rows = Papa.parse<string[]>(reportToCsv(reportOfStored(rec, before)), {
      delimiter: ',',
      newline: '\r\n',
    }).data;
    const head = new Map(rows.filter((r) => r.length === 2).map((r) => [r[0], r[1]]));
    expect(head.get('unit')).toBe('OL3-0417');
    expect(head.get('serial')).toBe('OLW-0417');
    expect(head.get('label')).toBe('before');
    // A date-like text cell carries the leading apostrophe that keeps a spreadsheet from converting it
    // (lib/csv.ts needsGuard; OWASP "CSV Injection" and common spreadsheet practice).
    expect(head.get('taken_at')).toBe("'2026-11-30T09:15:00.000Z");
    expect(head.get('room_temp_c')).toBe('22.5');
    expect(head.get('meter')).toBe('bench DMM, 20 V range');
    expect(head.get('notes')).toBe('Ostlund Lane batch 3');
    expect(head.get('scale_error_cents_per_octave')).toBe('4.2');
    expect(head.get('verdict')).toBe('fail');
    expect(head.get('software')).toMatch(/^Spanmeter \d+\.\d+\.\d+/);
    const at = rows.findIndex((r) => r[0] === 'step');
    expect(rows[at]).toEqual([...CSV_STEP_COLUMNS]);
    expect(rows.slice(at + 1, at + 4).map((r) => r[3])).toEqual(['32.7', '65.54', '131.36']);
  });

  it('JSON: the same values and metadata', () => {
    const { rec, after } = record();
    const j = JSON.parse(reportToJson(reportOfStored(rec, after)));
    expect(j.unit).toMatchObject({
      name: 'OL3-0417',
      serial: 'OLW-0417',
      roomTempC: 22.5,
      meterUsed: 'bench DMM, 20 V range',
      notes: 'Ostlund Lane batch 3',
      toleranceCents: DEFAULT_TOLERANCE_CENTS,
    });
    expect(j.run).toMatchObject({ label: 'after', takenAt: '2026-11-30T10:40:00.000Z', saved: true });
    expect(j.result.steps.map((s: { hz: number }) => s.hz)).toEqual([32.7, 65.41, 130.82]);
    expect(j.result.fit.scaleErrorCentsPerOctave).toBe(0.25);
    expect(j.result).toEqual(after.result); // the run's one result, as the book saved it
    expect(j.run.verdict.kind).toBe('pass');
    expect(j.software.name).toBe('Spanmeter');
    expect(reportFileName(reportOfStored(rec, after))).toBe('ol3-0417-after-2026-11-30');
  });

  it('the verdict uses the unit’s tolerance (default ±2 ¢, docs/facts.md)', () => {
    const { rec, before } = record();
    expect(verdictFor(resultFromStored(before.result), 2).kind).toBe('fail');
    expect(verdictFor(resultFromStored(before.result), 10).kind).toBe('pass');
    expect(reportOfStored({ ...rec, toleranceCents: 10 }, before).toleranceCents).toBe(10);
    expect(verdictFor(resultFromStored(v2({ steps: [], fit: null, advice: [] })), 2).kind).toBe('none');
    // The report says what the verdict judges, so it is not read as the Fit box's note-line check.
    expect(trackingBasis(2)).toMatch(
      /^Tracking within ±2 ¢: each step against the ideal 1 V\/oct line through the lowest step \(the offset does not count\)/,
    );
  });

  it('the verdict takes each step with its expanded uncertainty (guarded acceptance, ISO 14253-1)', () => {
    // Guarded acceptance after ISO 14253-1:2017: conformance only when |error| + U is inside the tolerance,
    // nonconformance only when |error| − U is beyond it, otherwise undecided.
    const row = (volts: number, cents: number, expandedCents: number | null, uncertaintyCents = 0.01) => ({
      step: volts + 1,
      nominalVolts: volts,
      measuredVolts: null,
      volts,
      hz: 55 * 2 ** (volts + cents / 1200),
      noteName: 'A1',
      noteCents: 0,
      centsFromIdeal: cents,
      intervalErrorCents: null,
      uncertaintyCents,
      expandedCents,
      flags: [],
    });
    const base = resultFromStored(v2({ steps: [], fit: null, advice: [] }));
    const judge = (rows: ReturnType<typeof row>[]) => verdictFor({ ...base, rows }, 1);
    // 0.8 + 0.1 ≤ 1: within; 0.95 + 0.1 straddles 1; 1.2 − 0.1 > 1: outside.
    expect(judge([row(0, 0, 0.1), row(1, 0.8, 0.1)]).kind).toBe('pass');
    const straddle = judge([row(0, 0, 0.1), row(1, 0.95, 0.1)]);
    expect(straddle.kind).toBe('cannot-tell');
    expect(straddle.text).toMatch(/^Can't tell yet/);
    expect(straddle.worstCents).toBeCloseTo(0.95, 12);
    expect(straddle.worstExpandedCents).toBeCloseTo(0.1, 12);
    expect(judge([row(0, 0, 0.1), row(1, -1.2, 0.1)]).kind).toBe('fail');
    // No budget: U = 2 u (k = 2, JCGM 100:2008 §6.3): 0.95 + 2 × 0.01 ≤ 1 is a pass, 0.99 + 0.02 is not.
    expect(judge([row(0, 0, null), row(1, 0.95, null)]).kind).toBe('pass');
    expect(judge([row(0, 0, null), row(1, 0.99, null)]).kind).toBe('cannot-tell');
  });
});
