// One simulated calibration pass through every path that produces a result: the live run (reducer and the
// worker's calibrator), the app's WAV analysis, `spanmeter analyze --json`, the app's JSON export and a saved
// unit record (browser and desktop stores). Every number of the steps, the fit and the advice must be the
// same, bit for bit: they all come from the one pipeline (dsp/calibration/pipeline.ts). Only the step's `capture` (how
// it was measured: a window of the file, or the live host average) differs by nature.
//
// Scenario (invented): demo unit OL3-0417 of the Ostlund Lane workshop batch, scale trimmer off, recorded
// over 0–4 V; the Setup holds a clock correction of +35 ppm, a fit range of 1–4 V and a divider network.
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it, vi } from 'vitest';
import 'fake-indexeddb/auto';
import { IDBFactory } from 'fake-indexeddb';
import type { InputNetwork } from '../dsp/advice/index.ts';
import type { PitchOk } from '../dsp/pitch/index.ts';
import { resultToJsonText, type CalibrationResult } from '../dsp/calibration/index.ts';
import { createRun, type RunState } from '../dsp/calibration/index.ts';
import { findDemoUnit, planSchedule, renderOscillator } from '../dsp/sim/index.ts';
import { run as runCli } from '../cli/main.ts';
import { createRecordsStore } from '../main/records-store.ts';
import { feedReading, RunCalibrator } from '../renderer/src/engine/run-host.ts';
import { analyzeWavBytes } from '../renderer/src/engine/wav-analysis.ts';
import { runAnalysisOf } from '../renderer/src/lib/analysis.ts';
import { browserStore } from '../renderer/src/storage/store.ts';
import { draftFromInfo } from '../renderer/src/ui/RecordsPanel.tsx';
import { reportToJson, resultFromAnalysis, type RunReport } from '../renderer/src/ui/results/index.ts';
import { wavBytes } from './helpers/wav.ts';

const PLAN = [0, 1, 2, 3, 4];
const CLOCK_PPM = 35;
const NETWORK: InputNetwork = { topology: 'divider', seriesOhms: 100_000, shuntOhms: 1_800 };
const SETUP = { a4Hz: 440, clockPpm: CLOCK_PPM, fitFromVolts: 1, fitToVolts: 4, network: NETWORK };

const dir = mkdtempSync(join(tmpdir(), 'spanmeter-one-result-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const unit = findDemoUnit('ol3-0417')!;
const rec = renderOscillator(
  { ...unit.options, sampleRateHz: 48_000, snrDb: 60 },
  planSchedule(PLAN, { holdSeconds: 2.5 }),
);
// 32-bit float WAV holds the samples exactly, so every path reads the same numbers.
const bytes = wavBytes([rec.samples], rec.sampleRateHz, '32f');
const wavPath = join(dir, 'ol3-0417.wav');
writeFileSync(wavPath, bytes);

/** Everything but how each step was captured. */
function numbers(r: CalibrationResult): unknown {
  return { ...r, steps: r.steps.map(({ capture: _c, ...s }) => s) };
}

describe('one plan, every path, one result', () => {
  // The app's WAV analysis (the worker's side of Open WAV…).
  const out = analyzeWavBytes(bytes, { points: PLAN, channel: 1, ...SETUP });
  if (out.kind !== 'ok') throw new Error(out.message);
  const wavResult = out.analysis.result;

  it('the WAV analysis gives a fit and resistor advice (the pass is worth comparing)', () => {
    expect(wavResult.steps).toHaveLength(PLAN.length);
    expect(wavResult.fit).not.toBeNull();
    expect(wavResult.fit!.fromVolts).toBe(1);
    expect(wavResult.advice.some((a) => a.resistors !== null)).toBe(true);
    expect(wavResult.clockPpm).toBe(CLOCK_PPM);
  });

  it('analyze --json prints the same result', async () => {
    let printed = '';
    const spy = vi.spyOn(process.stdout, 'write').mockImplementation((chunk) => {
      printed += String(chunk);
      return true;
    });
    try {
      const args = ['analyze', wavPath, '--points', PLAN.join(','), '--clock-ppm', String(CLOCK_PPM)];
      args.push('--fit-from', '1', '--fit-to', '4', '--divider', '100000,1800', '--json');
      expect(await runCli(args)).toBe(0);
    } finally {
      spy.mockRestore();
    }
    expect(JSON.parse(printed)).toEqual(wavResult);
  });

  // The live run: the reducer walks the plan on live readings, and the host's precise capture of each step
  // returns what the recording measured for it (the frequency as read, before the clock correction).
  let state: RunState = createRun({ id: 'octaves-0-4', label: 'Octaves 0–4 V', volts: PLAN });
  const level = { rmsDbfs: -14, peakDbfs: -8, clippedFraction: 0 };
  let t = 0;
  out.analysis.steps.forEach((step) => {
    const rawHz = step.reading ? step.reading.hz : step.plateau.meanHz;
    const precise: PitchOk = {
      kind: 'ok',
      hz: rawHz,
      uncertaintyCents: step.uncertaintyCents,
      // The parts of the uncertainty, as the recording measured them (dsp/pitch/settled.ts).
      ...(step.components ? { components: step.components } : {}),
      // A creep the recording found in the window (dsp/recording/recording.ts, tailLeft) travels with it.
      ...(step.flags.includes('still-settling') ? { flags: ['still-settling'] } : {}),
      clarity: 0.99,
      level,
      windowSeconds: 1,
      harmonicsUsed: 24,
      timeSeconds: 0,
    };
    for (let k = 0; k < 80 && state.steps[step.index].status !== 'captured'; k++) {
      t += 0.05;
      const reading: PitchOk = { ...precise, uncertaintyCents: 0.02, windowSeconds: 0.05, timeSeconds: t };
      state = feedReading(state, reading, () => precise).state;
    }
  });
  const calibrator = new RunCalibrator();
  calibrator.setup = SETUP;
  const liveResult = calibrator.of(state, {}).result;

  it('the live run captured every step and its calibration is the same', () => {
    expect(state.steps.map((s) => s.status)).toEqual(PLAN.map(() => 'captured'));
    expect(numbers(liveResult)).toEqual(numbers(wavResult));
  });

  it('the JSON export is the same', () => {
    const exported = JSON.parse(resultToJsonText(runAnalysisOf(calibrator.of(state, {})).result));
    expect(numbers(exported)).toEqual(numbers(wavResult));
  });

  it("the scale pair opens on the two steps each trim's advice names in its target reading", () => {
    const a = runAnalysisOf(calibrator.of(state, {}));
    const model = resultFromAnalysis(a);
    let named = 0;
    for (const t of ['scale', 'hf'] as const) {
      const target = a.advice.items.find((i) => i.trimmer === t)?.target;
      if (!target) continue;
      named++;
      expect(model.pairs[t]).toEqual({ low: target.fromVolts, high: target.volts });
    }
    expect(named).toBeGreaterThan(0);
  });

  it("the app's JSON export of the run carries the one result shape, only wrapped in the unit's details", () => {
    const report: RunReport = {
      result: resultFromAnalysis(runAnalysisOf(calibrator.of(state, {}))),
      unitName: 'OL3-0417',
      serial: 'OL3-0417',
      label: 'before',
      takenAt: '2026-12-02T10:00:00.000Z',
      roomTempC: null,
      meterUsed: null,
      warmUpMinutes: null,
      notes: null,
      planVolts: PLAN,
      toleranceCents: 2,
      saved: false,
      softwareVersion: '0.0.0',
    };
    const j = JSON.parse(reportToJson(report));
    expect(Object.keys(j).sort()).toEqual(['format', 'result', 'run', 'software', 'unit', 'version']);
    expect(j.result).toEqual(JSON.parse(resultToJsonText(liveResult)));
    expect(numbers(j.result)).toEqual(numbers(wavResult));
    // The envelope adds only what the result does not hold: no second copy of steps, fit or advice.
    expect(Object.keys(j.run).sort()).toEqual(['label', 'plan', 'saved', 'takenAt', 'verdict']);
  });

  it('a saved record (browser and desktop stores) holds the same', async () => {
    const info = {
      unitName: 'OL3-0417',
      serial: 'OL3-0417',
      notes: '',
      roomTempC: '',
      meterUsed: '',
      warmUpMinutes: '',
      toleranceCents: '',
    };
    const runs = [
      {
        id: 'live',
        takenAt: '2026-12-02T10:00:00.000Z',
        label: 'before',
        plan: { volts: PLAN },
        result: liveResult,
      },
      {
        id: 'wav',
        takenAt: '2026-12-02T10:05:00.000Z',
        label: 'file',
        plan: { volts: PLAN },
        result: wavResult,
      },
    ];
    const store = browserStore({ indexedDB: new IDBFactory(), download: () => {} });
    const saved = await store.saveRecord(draftFromInfo(info, runs));
    if (!saved.ok) throw new Error(saved.error.message);
    const loaded = await store.loadRecord(saved.value.id);
    if (!loaded.ok) throw new Error(loaded.error.message);
    const desktop = createRecordsStore({
      recordsDir: join(dir, 'records'),
      autosaveFile: join(dir, 'autosave.json'),
    });
    const onDisk = await desktop.load((await desktop.save(draftFromInfo(info, runs))).id);
    for (const record of [loaded.value, onDisk]) {
      expect(record.runs[0].result).toEqual(liveResult);
      expect(record.runs[1].result).toEqual(wavResult);
      expect(numbers(record.runs[0].result)).toEqual(numbers(wavResult));
    }
  });
});
