// Every shape Spanmeter saved or exported before result schema 2 still loads, moved into the one result
// shape without losing a number. The fixtures in test/fixtures/v1 were written by the code before the change
// (see their README) and are never regenerated.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import 'fake-indexeddb/auto';
import { IDBFactory } from 'fake-indexeddb';
import { describe, expect, it } from 'vitest';
import { analyzeRecording } from '../dsp/recording/index.ts';
import { calibrate, runSteps } from '../dsp/calibration/index.ts';
import { CalibrationResultSchema, migrateResult, type CalibrationResult } from '../dsp/calibration/index.ts';
import { validateRunState } from '../dsp/calibration/index.ts';
import { findDemoUnit, planSchedule, renderOscillator } from '../dsp/sim/index.ts';
import { RECORD_SCHEMA_VERSION } from '../main/ipc-contract.ts';
import { parseRecordText } from '../main/records-store.ts';
import { browserStore, STORAGE_KEYS } from '../renderer/src/storage/store.ts';

const FIXTURES = join(import.meta.dirname, 'fixtures', 'v1');
const text = (name: string) => readFileSync(join(FIXTURES, name), 'utf8');
const json = (name: string) => JSON.parse(text(name)) as Record<string, unknown>;

interface V1Step {
  volts: number | null;
  hz: number;
  uncertaintyCents: number;
  centsFromIdeal: number | null;
  intervalErrorCents: number | null;
  measuredVolts?: number | null;
}
interface V1Result {
  steps: V1Step[];
  fit: { octavesPerVolt: number; scaleErrorCentsPerOctave: number; hzAt0V: number; maxResidualCents: number };
  advice: {
    text: string;
    trimmer?: string;
    status?: string | null;
    direction?: string;
    errorCents?: number;
  }[];
}

/** Every number and word of a schema 1 result is in the migrated one, unchanged. */
function expectKept(old: V1Result, now: CalibrationResult): void {
  expect(now.schemaVersion).toBe(2);
  expect(now.migratedFrom).toBe(1);
  expect(
    now.steps.map((s) => [s.volts, s.hz, s.uncertaintyCents, s.centsFromIdeal, s.intervalErrorCents]),
  ).toEqual(
    old.steps.map((s) => [s.volts, s.hz, s.uncertaintyCents, s.centsFromIdeal, s.intervalErrorCents]),
  );
  expect(now.steps.map((s) => s.measuredVolts)).toEqual(old.steps.map((s) => s.measuredVolts ?? null));
  expect(now.fit).toMatchObject(old.fit);
  expect(now.advice.map((a) => a.text)).toEqual(old.advice.map((a) => a.text));
  old.advice.forEach((a, i) => {
    for (const k of ['trimmer', 'status', 'direction', 'errorCents'] as const)
      if (a[k] !== undefined) expect(now.advice[i][k]).toEqual(a[k]);
  });
  expect(CalibrationResultSchema.safeParse(now).success).toBe(true);
}

describe('records of schema 1', () => {
  it('the desktop store reads a version 1 file as version 2, both runs (live and recording) kept', () => {
    const file = json('record-desktop.json') as { runs: { result: V1Result }[] };
    const parsed = parseRecordText(text('record-desktop.json'));
    expect(parsed.kind).toBe('ok');
    if (parsed.kind !== 'ok') return;
    expect(parsed.record.schemaVersion).toBe(RECORD_SCHEMA_VERSION);
    expect(parsed.record.runs).toHaveLength(2);
    parsed.record.runs.forEach((run, i) => expectKept(file.runs[i].result, run.result));
    // The unit's own fields are untouched.
    const { runs: _a, schemaVersion: _b, ...unit } = file as Record<string, unknown>;
    expect(parsed.record).toMatchObject(unit);
  });

  it('the browser store reads its version 1 localStorage map', async () => {
    const stored = json('browser-localstorage.json') as Record<string, string>;
    const map = new Map(Object.entries(stored));
    const store = browserStore({
      indexedDB: new IDBFactory(),
      legacy: {
        getItem: (k) => map.get(k) ?? null,
        setItem: (k, v) => void map.set(k, v),
        removeItem: (k) => void map.delete(k),
      },
      download: () => {},
    });
    const old = JSON.parse(stored[STORAGE_KEYS.records]) as Record<string, { runs: { result: V1Result }[] }>;
    const [id] = Object.keys(old);
    const list = await store.listRecords();
    expect(list.ok && list.value.map((r) => [r.id, r.unitName, r.runCount])).toEqual([[id, 'Crème VCO', 2]]);
    const loaded = await store.loadRecord(id);
    expect(loaded.ok).toBe(true);
    if (!loaded.ok) return;
    loaded.value.runs.forEach((run, i) => expectKept(old[id].runs[i].result, run.result));
  });
});

describe('the JSON exports of schema 1', () => {
  it.each([['analyze-json.json'], ['export-json.json']])('%s moves to the one result shape', (name) => {
    const old = json(name) as unknown as V1Result;
    const m = migrateResult(old);
    expect(m.kind).toBe('ok');
    if (m.kind === 'ok') expectKept(old, m.result);
  });

  it('a shape that is neither is refused with one line naming the field', () => {
    expect(migrateResult({ steps: 'x' })).toEqual({
      kind: 'error',
      message: expect.stringMatching(/^not a Spanmeter result: steps: /),
    });
    expect(migrateResult({ schemaVersion: 2, steps: [] }).kind).toBe('error');
  });
});

describe('the autosave of schema 1 and the one pipeline', () => {
  it('the autosaved run still loads, and the pipeline gives the numbers the old code saved, bit for bit', () => {
    const file = json('autosave.json') as { state: unknown };
    const v = validateRunState(file.state);
    expect(v.kind).toBe('ok');
    if (v.kind !== 'ok') return;
    // The fixture's live run was analysed with clock 35 ppm, fit range 0…4 V (see the README).
    const now = calibrate(runSteps(v.state), { clockPpm: 35, fitFromVolts: 0, fitToVolts: 4 }).result;
    const saved = (json('record-desktop.json') as { runs: { result: V1Result }[] }).runs[0].result;
    const m = migrateResult(saved);
    if (m.kind !== 'ok') throw new Error(m.message);
    expect(now.steps.map((s) => [s.hz, s.centsFromIdeal, s.intervalErrorCents, s.measuredVolts])).toEqual(
      m.result.steps.map((s) => [s.hz, s.centsFromIdeal, s.intervalErrorCents, s.measuredVolts]),
    );
    // Issue 9: the fit and the advice now come from the calibration model (dsp/model/model.ts); the straight line
    // the old code saved stays available, labelled, in fit.straightLine, with the same weights as before.
    const old = saved.fit as { scaleErrorCentsPerOctave: number; hzAt0V: number };
    expect(
      Math.abs(now.fit!.straightLine!.scaleErrorCentsPerOctave - old.scaleErrorCentsPerOctave),
    ).toBeLessThan(1e-9);
    expect(Math.abs(1200 * Math.log2(now.fit!.straightLine!.hzAt0V / old.hzAt0V))).toBeLessThan(1e-9);
    expect(now.fit!.model?.criterion).toBe('AICc');
    expect(now.advice.filter((a) => a.kind === 'trim').map((a) => a.trimmer)).toEqual(
      expect.arrayContaining(['scale', 'hf', 'offset']),
    );
  });

  it('the recording analysis agrees with what `analyze --json` printed before, within the stated uncertainties', () => {
    const unit = findDemoUnit('ol3-0417')!;
    const plan = [0, 1, 2, 3, 4];
    const rec = renderOscillator(
      { ...unit.options, sampleRateHz: 48000, snrDb: 70, clockPpm: 0 },
      planSchedule(plan, { holdSeconds: 2.5 }),
    );
    const a = analyzeRecording(rec.samples, rec.sampleRateHz, {
      points: plan,
      measuredVolts: [null, 1.0012, null, null, null],
      clockPpm: 35,
      fitFromVolts: 0,
      fitToVolts: 4,
    });
    if (a.kind !== 'ok') throw new Error(a.message);
    const old = json('analyze-json.json') as unknown as V1Result & { fit: Record<string, unknown> };
    const m = migrateResult(old);
    if (m.kind !== 'ok') throw new Error(m.message);
    const { migratedFrom: _m, ...was } = m.result;
    // Issue 9 changed how a step is measured: the last settled second of each plateau (not the middle one),
    // and the oscillator's repeatability now enters each step's uncertainty. So the numbers are no longer
    // bit for bit those of schema 1; each step must agree with the old one within the two stated σ combined
    // (common practice for comparing two measurements, no source), with the same note.
    // Below a thousandth of a cent (a tenth of what the app resolves) the comparison has a floor: the
    // break search changed the 32 Hz step by 0.0002 cent, towards the known truth (0.00014 cent from it,
    // was 0.00034), where both stated about 0.00004 cent. At that level the estimator's own small bias
    // on a 32 Hz tone, not a change of behaviour, decides; the floor is ours, no source.
    const floorCents = 0.001;
    const old1 = (was as CalibrationResult).steps;
    expect(a.result.steps.map((s) => s.note)).toEqual(old1.map((s) => s.note));
    for (const [i, s] of a.result.steps.entries()) {
      const dCents = 1200 * Math.log2(s.hz / old1[i].hz);
      const sigma = Math.hypot(s.uncertaintyCents, old1[i].uncertaintyCents);
      expect(Math.abs(dCents), `step ${i}: ${dCents} cent against σ ${sigma}`).toBeLessThan(
        Math.max(2 * sigma, floorCents),
      );
      expect(s.uncertaintyCents + floorCents).toBeGreaterThanOrEqual(old1[i].uncertaintyCents);
    }
    // The headline fit and the advice come from the calibration model; the old straight line is kept.
    // It is weighted by the steps' stated uncertainties through points that miss it by up to 1.3 cent (the
    // HF bend), so it moves with those weights: the 0 V step (no tail before it, no wander in this unit)
    // now states its estimator's σ alone, where spurious sub-window scatter once added 0.005 cent. It must
    // stay within two of the old line's own standard errors of the scale (weighted least squares, common
    // practice, no source).
    const oldStdErr = was.fit!.scaleErrorStdErrCents;
    expect(oldStdErr).toBeGreaterThan(0.1); // 0.22 cent per octave in the fixture
    expect(
      Math.abs(a.result.fit!.straightLine!.scaleErrorCentsPerOctave - was.fit!.scaleErrorCentsPerOctave),
    ).toBeLessThan(2 * oldStdErr!);
    expect(a.result.fit!.model?.criterion).toBe('AICc');
    expect(a.result.advice.map((x) => x.kind)).toEqual(expect.arrayContaining(['trim', 'next', 'caution']));
  });
});
