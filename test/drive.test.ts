import { describe, expect, it } from 'vitest';
import { linearRegression } from 'simple-statistics';
import { Midi } from '@tonaljs/tonal';
import {
  BENCH_METER_4_5_DIGIT,
  SIM_DRIVE_MODEL,
  SIM_METER_SPEC,
  VOLTS_PER_SEMITONE,
  appliedVoltsAt,
  bendValueForSemitones,
  checkTargetVolts,
  clampLevel,
  fitDriveCalibration,
  levelBounds,
  levelForVolts,
  meterUncertainty,
  nextCalibrationLevel,
  noteOffBytes,
  noteOnBytes,
  noteToNominalVolts,
  nominalVoltsToNote,
  passFromAdvice,
  pitchBendBytes,
  planMidiStep,
  planRamp,
  rampLevelAt,
  simDriveTrueVolts,
  simMeterReading,
  trimLoopVerdict,
  type CalibrationReading,
  type DriveCalibration,
} from '../dsp/drive/index.ts';
import { midiToHz } from '../dsp/math/index.ts';
import { createRun, runCaptures, runReducer } from '../dsp/calibration/index.ts';
import type { TrimAdvice } from '../dsp/advice/index.ts';

// Demo scenario (invented): the Ostlund Lane workshop's bench interface output, 9.87 V at full scale.
const METER_0_1MV = { percentOfReading: 0.05, counts: 3, resolutionVolts: 0.0001 };

function okCal(readings: CalibrationReading[], meter = METER_0_1MV): DriveCalibration {
  const r = fitDriveCalibration(readings, meter, { expectedGain: 10 });
  if (r.kind !== 'ok') throw new Error(`expected a calibration, got ${r.kind}`);
  return r.calibration;
}

describe('meter uncertainty', () => {
  it('matches the worked example: ±(0.05 % + 3) on 1.0000 V with 0.1 mV counts is ±0.8 mV, u = 0.46 mV', () => {
    // docs/facts.md "Uncertainty"; u = a/√3 (GUM 4.3.7) plus a half-count (GUM F.2.2.1).
    const u = meterUncertainty(1, METER_0_1MV);
    expect(u.boundVolts).toBeCloseTo(0.0008, 12);
    expect(u.standardVolts * 1000).toBeCloseTo(0.46, 2);
  });
  it('3½-digit ±(0.5 % + 2) reads 1 V to about ±7 mV', () => {
    // docs/facts.md "How technicians calibrate": ±7 mV at 1 V (1 mV counts).
    expect(
      meterUncertainty(1, { percentOfReading: 0.5, counts: 2, resolutionVolts: 0.001 }).boundVolts,
    ).toBeCloseTo(0.007, 12);
  });
  it('refuses a bad specification with a message naming it', () => {
    expect(() => meterUncertainty(1, { percentOfReading: -1, counts: 3, resolutionVolts: 0.001 })).toThrow(
      'meter percentOfReading must be in [0, 10] %, got -1',
    );
  });
});

describe('drive calibration fit', () => {
  const readings = [0, 0.1, 0.3, 0.5, 0.7].map((level) => ({
    level,
    readingVolts: Number((9.87 * level + 0.0075).toFixed(4)),
  }));
  it('fits gain and offset as simple-statistics linearRegression does', () => {
    // Reference: simple-statistics 7.12 linearRegression (ordinary least squares).
    const ref = linearRegression(readings.map((r) => [r.level, r.readingVolts]));
    const cal = okCal(readings);
    expect(cal.gainVoltsPerLevel).toBeCloseTo(ref.m, 10);
    expect(cal.offsetVolts).toBeCloseTo(ref.b, 10);
    expect(cal.gainVoltsPerLevel).toBeCloseTo(9.87, 3);
    expect(cal.offsetVolts).toBeCloseTo(0.0075, 4);
  });
  it('inverts: levelForVolts then appliedVoltsAt gives the voltage back', () => {
    const cal = okCal(readings);
    for (const v of [0, 1, 3.5, 7])
      expect(appliedVoltsAt(cal, levelForVolts(cal, v)).volts).toBeCloseTo(v, 12);
  });
  it('gives each applied voltage at least the meter’s own standard uncertainty', () => {
    const cal = okCal(readings);
    for (const v of [0.5, 2, 7]) {
      const a = appliedVoltsAt(cal, levelForVolts(cal, v));
      expect(a.uncertaintyVolts).toBeGreaterThanOrEqual(
        meterUncertainty(v, METER_0_1MV).standardVolts * (1 - 1e-9),
      );
      // and not much more with readings this close to the line (fit term small), common practice, no source
      expect(a.uncertaintyVolts).toBeLessThan(2 * meterUncertainty(v, METER_0_1MV).standardVolts + 1e-4);
    }
  });
  it('refuses readings that do not fit a line, naming the worst one', () => {
    const bad = [
      { level: 0, readingVolts: 0.0075 },
      { level: 0.1, readingVolts: 0.995 },
      { level: 0.25, readingVolts: 2.9 },
      { level: 0.3, readingVolts: 2.968 },
    ];
    const r = fitDriveCalibration(bad, METER_0_1MV);
    expect(r.kind).toBe('not-linear');
    if (r.kind === 'not-linear') {
      expect(r.worstIndex).toBe(2);
      expect(r.message).toContain('do not fit a line');
    }
  });
  it('blames a high-leverage outlier, not the point its pull moved off the line', () => {
    // A converter read at notes for 0, 2, 5 and 7 V whose last reading is wrong (common practice, no source).
    const r = fitDriveCalibration(
      [0.003, 2.007, 5.013, 6.2].map((readingVolts, i) => ({ level: [0, 2, 5, 7][i], readingVolts })),
      BENCH_METER_4_5_DIGIT,
      { expectedGain: 1 },
    );
    expect(r.kind).toBe('not-linear');
    if (r.kind === 'not-linear') {
      expect(r.worstIndex).toBe(3);
      expect(r.residualVolts).toBeCloseTo(6.2 - 7.017, 3);
      expect(r.message).toBe(
        'The readings do not fit a line: reading 4 (6.2 V) is -817.0 mV off the line, more than the 10.6 mV the meter allows. Check the reading and the patch, then calibrate again.',
      );
    }
  });
  it('needs three readings and a span', () => {
    expect(fitDriveCalibration(readings.slice(0, 2), METER_0_1MV).kind).toBe('too-few-readings');
    expect(
      fitDriveCalibration(
        [0, 0, 0].map(() => ({ level: 0.2, readingVolts: 2 })),
        METER_0_1MV,
      ).kind,
    ).toBe('no-span');
  });
  it('warns of an AC-coupled output: no DC at all', () => {
    const r = fitDriveCalibration(
      [0, 0.2, 0.4].map((level) => ({ level, readingVolts: 0.0001 })),
      METER_0_1MV,
      { expectedGain: 10 },
    );
    expect(r.kind).toBe('ac-coupled');
    if (r.kind === 'ac-coupled') expect(r.reason).toBe('no-dc');
  });
  it('warns of an AC-coupled output: a held level that decays', () => {
    // docs/facts.md "The sound card": an AC-coupled DC level decays within a fraction of a second to seconds.
    const r = fitDriveCalibration(readings, METER_0_1MV, {
      expectedGain: 10,
      holdCheck: { firstVolts: 6.9165, laterVolts: 5.1, seconds: 10 },
    });
    expect(r.kind).toBe('ac-coupled');
    if (r.kind === 'ac-coupled') expect(r.reason).toBe('decaying');
    const steady = fitDriveCalibration(readings, METER_0_1MV, {
      expectedGain: 10,
      holdCheck: { firstVolts: 6.9165, laterVolts: 6.9164, seconds: 10 },
    });
    expect(steady.kind).toBe('ok');
  });
  it('guided levels never overshoot a target even when the real gain is higher than the nominal', () => {
    // A drive that gives 12 V at full scale though sold as 10 V: the first non-zero level aims low.
    const real = (l: number) => 12 * l + 0.01;
    const targets = [0, 1, 3, 5];
    const rs: CalibrationReading[] = [];
    for (;;) {
      const l = nextCalibrationLevel(targets, rs, 10);
      if (l === null) break;
      rs.push({ level: l, readingVolts: real(l) });
    }
    expect(rs.map((r) => r.readingVolts)[1]).toBeCloseTo(1.198, 9); // first step at the nominal gain, offset known: 12·0.099 + 0.01
    expect(rs[2].readingVolts).toBeCloseTo(3, 9);
    expect(rs[3].readingVolts).toBeCloseTo(5, 9);
  });
});

describe('MIDI mapping and bytes (MIDI 1.0 Detailed Specification)', () => {
  it('numbers notes with middle C = 60 (C4 = 261.6256 Hz)', () => {
    // MIDI 1.0; @tonaljs/tonal's Midi.toMidi as the outside reference; docs/facts.md C4 = 261.6256 Hz.
    expect(Midi.toMidi('C4')).toBe(60);
    expect(midiToHz(60)).toBeCloseTo(261.6256, 4);
    expect(nominalVoltsToNote(0, 60)).toBe(60);
    expect(nominalVoltsToNote(1, 60)).toBe(Midi.toMidi('C5'));
  });
  it('moves 83.333 mV per semitone at 1 V/oct', () => {
    // docs/facts.md "The sound card" (derived: 1 V / 12).
    expect(VOLTS_PER_SEMITONE * 1000).toBeCloseTo(83.333, 3);
    expect(noteToNominalVolts(61, 60)).toBeCloseTo(0.083333, 6);
    expect(noteToNominalVolts(96, 36)).toBe(5);
  });
  it('builds note-on 0x9n and note-off 0x8n with n = channel − 1', () => {
    expect(noteOnBytes(1, 60)).toEqual([0x90, 60, 100]);
    expect(noteOnBytes(16, 72)).toEqual([0x9f, 72, 100]);
    expect(noteOffBytes(3, 48)).toEqual([0x82, 48, 0]);
    expect(() => noteOnBytes(17, 60)).toThrow('channel must be an integer in [1, 16], got 17');
    expect(() => noteOnBytes(1, 128)).toThrow('note must be an integer MIDI note in [0, 127], got 128');
  });
  it('builds 14-bit pitch bend, LSB first, centre 8192', () => {
    expect(pitchBendBytes(1, 8192)).toEqual([0xe0, 0x00, 0x40]);
    expect(pitchBendBytes(2, 16383)).toEqual([0xe1, 0x7f, 0x7f]);
    expect(bendValueForSemitones(1, 2)).toBe(12288);
    expect(bendValueForSemitones(-2, 2)).toBe(0);
  });
  it('plans a step by note alone, or note plus bend where the converter follows bend', () => {
    expect(planMidiStep(2, 36, null)).toEqual({ note: 60, bend: null, level: 2 });
    const withBend = planMidiStep(2.01, 36, 2);
    expect(withBend?.note).toBe(60);
    expect(withBend?.level).toBeCloseTo(2.01, 4);
    expect(planMidiStep(20, 36, null)).toBeNull();
  });
});

describe('safety: maximum, clamps and ramps', () => {
  const cal = okCal([
    { level: 0, readingVolts: 0.0075 },
    { level: 0.3, readingVolts: 2.9685 },
    { level: 0.6, readingVolts: 5.9295 },
  ]);
  it('refuses targets above the maximum or below 0 V', () => {
    expect(checkTargetVolts(7, 8).kind).toBe('ok');
    const r = checkTargetVolts(9, 8);
    expect(r.kind).toBe('refused');
    if (r.kind === 'refused')
      expect(r.message).toContain('above the drive’s maximum of 8 V'.replace('’', "'"));
    expect(checkTargetVolts(-0.5, 8).kind).toBe('refused');
    expect(() => checkTargetVolts(1, 20)).toThrow('maxVolts must be in (0, 10.5] V, got 20');
  });
  it('bounds levels so the calibrated voltage stays within the maximum', () => {
    const b = levelBounds(cal, 8, 1);
    expect(appliedVoltsAt(cal, b.high).volts).toBeCloseTo(8, 9);
    expect(appliedVoltsAt(cal, clampLevel(5, b)).volts).toBeLessThanOrEqual(8 + 1e-12);
    expect(clampLevel(Number.NaN, b)).toBe(0);
  });
  it('ramps linearly over the set length', () => {
    const r = planRamp(0, 0.5, 1, 0.05);
    expect(rampLevelAt(r, 0.9)).toBe(0);
    expect(rampLevelAt(r, 1.025)).toBeCloseTo(0.25, 12);
    expect(rampLevelAt(r, 1.06)).toBe(0.5);
    expect(planRamp(0, 1, 0, 10).seconds).toBe(2);
  });
});

describe('trim loop pass history', () => {
  const advice = (scale: number, ok: boolean): TrimAdvice => ({
    items: [
      {
        trimmer: 'scale',
        status: ok ? 'within-tolerance' : 'adjust',
        direction: 'none',
        errorCents: scale,
        gainChangePercent: null,
        millivoltsAtBase: null,
        millivoltsAtInput: null,
        resistors: null,
        text: '',
      },
      {
        trimmer: 'hf',
        status: 'within-tolerance',
        direction: 'none',
        errorCents: -0.4,
        gainChangePercent: null,
        millivoltsAtBase: null,
        millivoltsAtInput: null,
        resistors: null,
        text: '',
      },
    ],
    next: '',
    allWithinTolerance: ok,
    caution: '',
  });
  it('keeps scale, HF and offset per pass and stops on done or after the last pass', () => {
    const rows = [passFromAdvice(1, advice(4.2, false)), passFromAdvice(2, advice(1.1, false))];
    expect(rows[0]).toEqual({
      pass: 1,
      scaleCentsPerOctave: 4.2,
      hfCents: -0.4,
      offsetCents: null,
      withinTolerance: false,
      trimAdvised: true,
    });
    expect(trimLoopVerdict(rows, 3)).toBe('again');
    expect(trimLoopVerdict([...rows, passFromAdvice(3, advice(0.2, true))], 5)).toBe('done');
    expect(trimLoopVerdict([...rows, passFromAdvice(3, advice(0.9, false))], 3)).toBe('out-of-passes');
  });
  it('stops when a pass asks for no trim but cannot prove the tolerance (another pass would only repeat it)', () => {
    const idle = passFromAdvice(2, { ...advice(0.3, true), allWithinTolerance: false });
    expect(idle.trimAdvised).toBe(false);
    expect(trimLoopVerdict([passFromAdvice(1, advice(4.2, false)), idle], 5)).toBe('nothing-to-trim');
  });
});

describe('simulated bench', () => {
  it('its meter stays within its stated accuracy', () => {
    for (const v of [0, 0.5, 1, 3.3, 7, 9.9]) {
      const u = meterUncertainty(v, SIM_METER_SPEC);
      expect(Math.abs(simMeterReading(v) - v)).toBeLessThanOrEqual(
        u.boundVolts + SIM_METER_SPEC.resolutionVolts / 2,
      );
    }
  });
  it('its output has the modelled gain and offset error, which a calibration with its meter removes', () => {
    expect(simDriveTrueVolts(0.5)).toBeCloseTo(4.9425, 12);
    const rs: CalibrationReading[] = [];
    const targets = [0, 2, 4, 6];
    for (;;) {
      const l = nextCalibrationLevel(targets, rs, SIM_DRIVE_MODEL.nominalVoltsPerFullScale);
      if (l === null) break;
      rs.push({ level: l, readingVolts: simMeterReading(simDriveTrueVolts(l)) });
    }
    const cal = okCal(rs, SIM_METER_SPEC);
    for (const v of [0, 1, 2, 3, 4, 5, 6, 7]) {
      const l = levelForVolts(cal, v);
      const a = appliedVoltsAt(cal, l);
      const truth = simDriveTrueVolts(l);
      // The calibrated voltage is as good as the meter's bound (GUM: k·u with k = 2 covers it here).
      expect(Math.abs(a.volts - truth)).toBeLessThan(2 * a.uncertaintyVolts);
      // while the uncorrected output would have been out by tens of millivolts
      expect(Math.abs(simDriveTrueVolts(v / 10) - v)).toBeGreaterThan(v >= 1 ? 0.005 : 0);
    }
  });
  it('BENCH_METER_4_5_DIGIT reads 7 V to ±6.5 mV', () => {
    expect(meterUncertainty(7, BENCH_METER_4_5_DIGIT).boundVolts).toBeCloseTo(0.0065, 12);
  });
});

describe('run steps carry the applied voltage', () => {
  it('uses appliedVolts for the fit when no meter reading was typed, and keeps its uncertainty', () => {
    let s = createRun([0, 1]);
    s = runReducer(s, { type: 'set-applied-volts', stepIndex: 1, volts: 1.0004, uncertaintyVolts: 0.0005 });
    expect(s.steps[1].appliedVolts).toBe(1.0004);
    expect(s.steps[1].appliedVoltsUncertainty).toBe(0.0005);
    s = runReducer(s, { type: 'set-applied-volts', stepIndex: 1, volts: 99, uncertaintyVolts: 0 });
    expect(s.steps[1].appliedVolts).toBe(1.0004);
    // runCaptures reads stepVolts: with no capture there is nothing yet
    expect(runCaptures(s)).toEqual([]);
  });
});
