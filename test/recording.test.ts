import { describe, expect, it } from 'vitest';
import { CalibrationResultSchema, isRunResult } from '../dsp/calibration/index.ts';
import { RunSchema } from '../main/ipc-contract.ts';
import {
  analyzeRecording,
  describePlateauSpans,
  type RecordingAnalysis,
  type RecordingAnalysisOk,
} from '../dsp/recording/index.ts';
import {
  planSchedule,
  renderOscillator,
  type OscillatorOptions,
  type RenderedOscillator,
  type ScheduleSegment,
} from '../dsp/sim/index.ts';
import { gaussianNoise, toFloat32 } from './signals.ts';

/** Cents between two frequencies: 1200·log2(f1/f2) (A. J. Ellis, 1885). */
const cents = (f1: number, f2: number) => 1200 * Math.log2(f1 / f2);

function ok(a: RecordingAnalysis): RecordingAnalysisOk {
  if (a.kind !== 'ok') throw new Error(`expected an analysis, got ${a.code}: ${a.message}`);
  return a;
}

function render(options: OscillatorOptions, schedule: readonly ScheduleSegment[]): RenderedOscillator {
  return renderOscillator(options, schedule);
}

/** Joins recordings end to end (the second starts where the first ends). */
function concat(...parts: Float32Array[]): Float32Array {
  const out = new Float32Array(parts.reduce((n, p) => n + p.length, 0));
  let at = 0;
  for (const p of parts) {
    out.set(p, at);
    at += p.length;
  }
  return out;
}

interface AccuracyCase {
  readonly name: string;
  readonly osc: OscillatorOptions;
  readonly points: readonly number[];
  readonly schedule: Parameters<typeof planSchedule>[1];
  /** Largest allowed |measured − true| per step, cents. */
  readonly tolCents: number;
}

// Simulated stepped recordings (dsp/sim/simulate.ts): 35–50 dB SNR, mains hum, AC coupling (the simulator's
// default 5 Hz corner), glides and small overshoots between 2-second holds. No reset time and no bulk
// resistance, so the log-frequency line is straight and its slope is the model's scale exactly.
const CASES: readonly AccuracyCase[] = [
  {
    name: 'saw, 48 kHz, 45 dB, 50 Hz hum, linear glides',
    osc: { hz0: 55, shape: 'saw', snrDb: 45, humDb: -35, sampleRateHz: 48_000, seed: 3 },
    points: [0, 1, 2, 3, 4],
    schedule: { holdSeconds: 2, glideSeconds: 0.15 },
    tolCents: 0.05,
  },
  {
    name: 'square, 44.1 kHz, 35 dB, strong 50 Hz hum, overshoots, scale −3.6 cents/oct',
    osc: {
      hz0: 65.4,
      shape: 'square',
      snrDb: 35,
      humDb: -30,
      sampleRateHz: 44_100,
      seed: 4,
      scaleOctPerVolt: 0.997,
    },
    points: [0, 1, 2, 3, 4, 5],
    schedule: { holdSeconds: 2, glideSeconds: 0.15, overshootVolts: 0.05 },
    tolCents: 0.15,
  },
  {
    name: 'triangle, 96 kHz, 50 dB, exponential glides from −1 V, scale +2.4 cents/oct',
    osc: {
      hz0: 40,
      shape: 'triangle',
      snrDb: 50,
      humDb: -40,
      sampleRateHz: 96_000,
      seed: 5,
      scaleOctPerVolt: 1.002,
    },
    points: [-1, 0, 1, 2, 3],
    schedule: { holdSeconds: 2, glideSeconds: 0.2, glideShape: 'exponential' },
    tolCents: 0.05,
  },
  {
    name: 'sine, 48 kHz, 40 dB, 60 Hz hum near the first step, undershoots',
    osc: { hz0: 100, shape: 'sine', snrDb: 40, humDb: -35, humHz: 60, sampleRateHz: 48_000, seed: 6 },
    points: [0, 1, 2, 3],
    schedule: { holdSeconds: 2, glideSeconds: 0.1, overshootVolts: -0.03 },
    tolCents: 0.05,
  },
  {
    name: 'pulse 30 %, 48 kHz, 40 dB, from 30 Hz',
    osc: { hz0: 30, shape: 'pulse', pulseWidth: 0.3, snrDb: 40, humDb: -35, sampleRateHz: 48_000, seed: 7 },
    points: [0, 1, 2, 3, 4, 5],
    schedule: { holdSeconds: 2, glideSeconds: 0.15 },
    tolCents: 0.05,
  },
];

describe.each(CASES)('analyzeRecording: $name', ({ osc, points, schedule, tolCents }) => {
  const rec = render(osc, planSchedule(points, schedule));
  const a = ok(analyzeRecording(rec.samples, rec.sampleRateHz, { points }));

  it(`finds one settled step per voltage, each within ${tolCents} cent of the true recorded pitch`, () => {
    expect(a.steps.map((s) => s.volts)).toEqual(points);
    a.steps.forEach((s, i) => {
      const err = cents(s.hz, rec.truth[i].recordedHz);
      expect(Math.abs(err), `step ${i} (${points[i]} V): ${err.toFixed(4)} cents`).toBeLessThan(tolCents);
      // Every step was measured as one window lying inside its hold.
      expect(s.source).toBe('window');
      expect(s.windowStartSeconds).toBeGreaterThanOrEqual(rec.truth[i].startSeconds - 0.05);
      expect(s.windowEndSeconds).toBeLessThanOrEqual(rec.truth[i].endSeconds + 1e-9);
      expect(s.windowEndSeconds - s.windowStartSeconds).toBeGreaterThan(0.5);
    });
  });

  it('fits the model scale within 0.0002 octave per volt (no droop in the model)', () => {
    const truth = osc.scaleOctPerVolt ?? 1;
    expect(a.fit).not.toBeNull();
    expect(Math.abs(a.fit!.octavesPerVolt - truth), `fitted ${a.fit!.octavesPerVolt}`).toBeLessThan(2e-4);
    // The 1 V/oct definition: the scale error is 1200·(s − 1) cents per volt (docs/facts.md, Ellis 1885),
    // so every interval error is that times the step in volts.
    a.steps.slice(1).forEach((s, i) => {
      const dv = points[i + 1] - points[i];
      expect(s.intervalErrorCents! - 1200 * (truth - 1) * dv).toBeCloseTo(0, 1);
    });
  });
});

describe('analyzeRecording: reference checks', () => {
  it('a 1 µs reset time bends the top flat by −1200·log2(1 + f·t) (docs/facts.md, "The exponential converter")', () => {
    const points = [0, 1, 2, 3, 4, 5];
    const t = 1e-6;
    const rec = render(
      { hz0: 55, resetSeconds: t, snrDb: 45, humDb: -35, seed: 9 },
      planSchedule(points, { holdSeconds: 2 }),
    );
    const a = ok(analyzeRecording(rec.samples, rec.sampleRateHz, { points }));
    // The core runs at 55·2^V Hz before the reset time; the table's error is against the first step.
    const e = (v: number) => -1200 * Math.log2(1 + 55 * 2 ** v * t);
    a.steps.forEach((s, i) => {
      expect(Math.abs(s.centsFromIdeal! - (e(points[i]) - e(0))), `step ${i}`).toBeLessThan(0.05);
    });
    expect(a.bends?.highEnd).toMatchObject({ kind: 'bent', direction: 'flat' });
    expect(a.advice?.items.find((it) => it.trimmer === 'hf')?.status).toBe('adjust');
  });

  it('a clock 100 ppm fast reads every pitch 0.173 cent low; clockPpm corrects it (docs/facts.md, "The sound card")', () => {
    const points = [0, 2, 4];
    const rec = render(
      { hz0: 55, clockPpm: 100, snrDb: 45, humDb: -35, seed: 10 },
      planSchedule(points, { holdSeconds: 2 }),
    );
    const raw = ok(analyzeRecording(rec.samples, rec.sampleRateHz, { points }));
    const fixed = ok(analyzeRecording(rec.samples, rec.sampleRateHz, { points, clockPpm: 100 }));
    raw.steps.forEach((s, i) => {
      expect(cents(s.hz, rec.truth[i].settledHz)).toBeCloseTo(-0.1731, 2);
      expect(Math.abs(cents(fixed.steps[i].hz, rec.truth[i].settledHz))).toBeLessThan(0.05);
    });
    // A clock error scales every frequency alike, so the scale is immune (docs/facts.md).
    expect(fixed.fit!.octavesPerVolt).toBeCloseTo(raw.fit!.octavesPerVolt, 9);
  });

  it('meter readings replace the nominal volts: 3 mV high is 3.6 cents (1 mV = 1.2 cents, docs/facts.md)', () => {
    const rec = render({ hz0: 55, snrDb: 45, seed: 11 }, [
      { volts: 0, holdSeconds: 2 },
      { volts: 1.003, holdSeconds: 2, glideSeconds: 0.15 },
      { volts: 2, holdSeconds: 2, glideSeconds: 0.15 },
    ]);
    const points = [0, 1, 2];
    const nominal = ok(analyzeRecording(rec.samples, rec.sampleRateHz, { points }));
    expect(nominal.steps[1].centsFromIdeal).toBeCloseTo(3.6, 1);
    const metered = ok(
      analyzeRecording(rec.samples, rec.sampleRateHz, { points, measuredVolts: [null, 1.003, null] }),
    );
    expect(metered.steps[1].measuredVolts).toBe(1.003);
    expect(Math.abs(metered.steps[1].centsFromIdeal!)).toBeLessThan(0.05);
    expect(metered.result.steps[1].measuredVolts).toBe(1.003);
    expect(metered.result.steps[0].measuredVolts).toBeNull();
  });
});

describe('analyzeRecording: what is and is not a plateau', () => {
  it('an overshoot and a pause shorter than the settle time are not steps; a thermal tail still settles', () => {
    // 0 V, then a stop at 0.5 V for 0.3 s on the way to 1 V (shorter than the 0.5 s settle time), then 2 V
    // with a 0.25 s overshoot of 0.3 V. The oscillator creeps back from a thermal tail after each step.
    const rec = render({ hz0: 110, snrDb: 45, humDb: -35, tailCentsPerVolt: -0.1, tailTauSeconds: 0.5 }, [
      { volts: 0, holdSeconds: 2 },
      { volts: 0.5, holdSeconds: 0.3, glideSeconds: 0.1 },
      { volts: 1, holdSeconds: 2, glideSeconds: 0.1 },
      { volts: 2, holdSeconds: 2, glideSeconds: 0.1, overshootVolts: 0.3, overshootSeconds: 0.25 },
    ]);
    const a = ok(analyzeRecording(rec.samples, rec.sampleRateHz, { points: [0, 1, 2] }));
    [0, 2, 3].forEach((k, i) => {
      // The tail has decayed to a few hundredths of a cent by the window: within 0.1 cent of the truth.
      expect(Math.abs(cents(a.steps[i].hz, rec.truth[k].recordedHz)), `step ${i}`).toBeLessThan(0.1);
    });
  });

  it('a silence between two holds at the same voltage ends the plateau: two steps', () => {
    const hold = render({ hz0: 220, snrDb: 45, seed: 12 }, [{ volts: 0, holdSeconds: 2 }]);
    const gap = new Float32Array(Math.round(0.6 * hold.sampleRateHz));
    const samples = concat(hold.samples, gap, hold.samples);
    const a = ok(analyzeRecording(samples, hold.sampleRateHz, { points: [0, 0] }));
    expect(a.steps).toHaveLength(2);
    expect(a.steps[0].endSeconds).toBeLessThan(2.05);
    expect(a.steps[1].startSeconds).toBeGreaterThan(2.6);
  });

  it('a click in the middle of a hold does not split the step', () => {
    const rec = render({ hz0: 110, snrDb: 45, seed: 13 }, planSchedule([0, 1], { holdSeconds: 3 }));
    const samples = rec.samples.slice();
    const at = Math.round(1.5 * rec.sampleRateHz);
    for (let i = 0; i < 40; i++) samples[at + i] = i % 2 === 0 ? 0.95 : -0.95;
    const a = ok(analyzeRecording(samples, rec.sampleRateHz, { points: [0, 1] }));
    a.steps.forEach((s, i) => expect(Math.abs(cents(s.hz, rec.truth[i].recordedHz))).toBeLessThan(0.05));
  });

  it('one steady tone and no points: that tone, with volts null and no fit', () => {
    const rec = render({ hz0: 261.6255653, shape: 'triangle', snrDb: 45 }, [{ volts: 0, holdSeconds: 2 }]);
    const a = ok(analyzeRecording(rec.samples, rec.sampleRateHz));
    expect(a.steps).toHaveLength(1);
    expect(a.steps[0].volts).toBeNull();
    // C4 = 261.6256 Hz at A4 = 440 Hz (ISO 16:1975).
    expect(a.steps[0].note.name).toBe('C4');
    expect(Math.abs(cents(a.steps[0].hz, rec.truth[0].recordedHz))).toBeLessThan(0.01);
    expect([a.table, a.fit, a.advice]).toEqual([null, null, null]);
    expect(a.result).toMatchObject({ fit: null, advice: [] });
    expect(isRunResult(a.result)).toBe(false);
  });
});

describe('analyzeRecording: typed non-answers', () => {
  const fs = 48_000;

  it('silence: every sample 0', () => {
    const a = analyzeRecording(new Float32Array(3 * fs), fs, { points: [0, 1] });
    expect(a).toMatchObject({ kind: 'error', code: 'silence' });
  });

  it('silence: only noise 90 dB below full scale', () => {
    const a = analyzeRecording(toFloat32(gaussianNoise(3 * fs, 3e-5, 1)), fs);
    expect(a).toMatchObject({ kind: 'error', code: 'silence' });
  });

  it('no pitch: loud white noise', () => {
    const a = analyzeRecording(toFloat32(gaussianNoise(3 * fs, 0.2, 2)), fs, { points: [0] });
    if (a.kind !== 'error') throw new Error('expected an error');
    // Noise may now and then pass as a pitch in one live window, but it never settles.
    expect(['no-pitch', 'no-plateaus']).toContain(a.code);
  });

  it('too short to hold one settled step', () => {
    const rec = render({ hz0: 220 }, [{ volts: 0, holdSeconds: 0.4 }]);
    expect(analyzeRecording(rec.samples, rec.sampleRateHz)).toMatchObject({ code: 'too-short' });
  });

  it('no plateaus: a pitch that never stops gliding', () => {
    const rec = render({ hz0: 55, snrDb: 45 }, [
      { volts: 0, holdSeconds: 0 },
      { volts: 3, holdSeconds: 0, glideSeconds: 4 },
    ]);
    expect(analyzeRecording(rec.samples, rec.sampleRateHz)).toMatchObject({ code: 'no-plateaus' });
  });

  it('plateau count mismatch: says how many were found and when', () => {
    const rec = render({ hz0: 55, snrDb: 45, seed: 14 }, planSchedule([0, 1, 2], { holdSeconds: 2 }));
    const a = analyzeRecording(rec.samples, rec.sampleRateHz, { points: [0, 1, 2, 3] });
    if (a.kind !== 'error') throw new Error('expected an error');
    expect(a.code).toBe('plateau-count-mismatch');
    expect(a.expected).toBe(4);
    expect(a.plateaus).toHaveLength(3);
    a.plateaus.forEach((p, i) => {
      expect(p.startSeconds).toBeGreaterThanOrEqual(rec.truth[i].startSeconds - 0.2);
      expect(p.endSeconds).toBeLessThanOrEqual(rec.truth[i].endSeconds + 0.05);
    });
    expect(a.message).toBe(
      `found 3 plateaus (at ${describePlateauSpans(a.plateaus)}) but 4 voltages were given`,
    );
    expect(a.message).toMatch(
      /^found 3 plateaus \(at \d+\.\d–\d+\.\d s, \d+\.\d–\d+\.\d s, \d+\.\d–\d+\.\d s\)/,
    );
  });

  it('describePlateauSpans lists at most 12 spans, then …', () => {
    const spans = Array.from({ length: 14 }, (_, i) => ({
      startSeconds: i,
      endSeconds: i + 0.94,
      meanHz: 1,
    }));
    const text = describePlateauSpans(spans);
    expect(text.startsWith('0.0–0.9 s, 1.0–1.9 s, ')).toBe(true);
    expect(text.endsWith('11.0–11.9 s, …')).toBe(true);
  });
});

describe('analyzeRecording: misuse throws, naming the option and its range', () => {
  const x = new Float32Array(48_000);
  it.each<[string, Parameters<typeof analyzeRecording>[2], string]>([
    ['settleSeconds', { settleSeconds: -1 }, 'settleSeconds must be a finite number from 0 to 60, got -1'],
    ['a4Hz', { a4Hz: 1000 }, 'a4Hz must be a finite number from 380 to 500, got 1000'],
    ['points', { points: [0, Number.NaN] }, 'points[1] must be a finite number from -12 to 12, got NaN'],
    ['clockPpm', { clockPpm: 5000 }, 'clockPpm must be a finite number from -1000 to 1000, got 5000'],
    [
      'measuredVolts length',
      { points: [0, 1], measuredVolts: [0] },
      'measuredVolts must have one entry per point (2), got 1',
    ],
    [
      'measuredVolts alone',
      { measuredVolts: [0] },
      'measuredVolts needs points: give the nominal voltages too',
    ],
    ['fitFromVolts', { fitFromVolts: 30 }, 'fitFromVolts must be a finite number from -12 to 12, got 30'],
    [
      'fit range reversed',
      { fitFromVolts: 3, fitToVolts: 1 },
      'fitFromVolts (3) must not exceed fitToVolts (1)',
    ],
    [
      'network',
      { network: { topology: 'divider', seriesOhms: 100e3, shuntOhms: 0 } },
      'network.shuntOhms must be a finite number greater than 0, got 0',
    ],
  ])('%s', (_name, opts, message) => {
    expect(() => analyzeRecording(x, 48_000, opts)).toThrow(message);
  });

  it('a sample rate outside 8–384 kHz', () => {
    expect(() => analyzeRecording(x, 1000)).toThrow(
      /sampleRateHz must be between 8000 and 384000 Hz, got 1000/,
    );
  });
});

describe('analyzeRecording: fit range and input network', () => {
  // 0…5 V at +3.6 cents per octave (1200·(1.003 − 1), the 1 V/oct definition), no HF error.
  const points = [0, 1, 2, 3, 4, 5];
  const rec = render(
    { hz0: 55, snrDb: 45, humDb: -35, scaleOctPerVolt: 1.003, seed: 16 },
    planSchedule(points, { holdSeconds: 2 }),
  );
  const network = { topology: 'divider', seriesOhms: 100e3, shuntOhms: 1.8e3 } as const;
  const whole = ok(analyzeRecording(rec.samples, rec.sampleRateHz, { points }));
  const narrow = ok(
    analyzeRecording(rec.samples, rec.sampleRateHz, { points, fitFromVolts: 1, fitToVolts: 4, network }),
  );

  it('the fit and its bends use only the steps in the range; the table keeps every step', () => {
    expect(whole.fit).toMatchObject({ fromVolts: 0, toVolts: 5, usedIndices: [0, 1, 2, 3, 4, 5] });
    expect(narrow.fit).toMatchObject({ fromVolts: 1, toVolts: 4, usedIndices: [1, 2, 3, 4] });
    expect(narrow.fit!.residualsCents).toHaveLength(4);
    expect(narrow.bends!.middle.fromVolts).toBeGreaterThanOrEqual(1);
    expect(narrow.bends!.middle.toVolts).toBeLessThanOrEqual(4);
    expect(narrow.table!.rows).toHaveLength(points.length);
    expect(narrow.steps.map((s) => s.hz)).toEqual(whole.steps.map((s) => s.hz));
    expect(narrow.fit!.scaleErrorCentsPerOctave).toBeCloseTo(3.6, 1);
  });

  it('the scale advice carries resistor values for the network; JSON keeps them', () => {
    const scale = narrow.advice!.items[0];
    expect(scale).toMatchObject({ trimmer: 'scale', status: 'adjust', direction: 'narrow' });
    expect(scale.resistors?.map((r) => r.part)).toEqual(['series', 'shunt']);
    expect(whole.advice!.items[0].resistors).toBeNull();
    expect(narrow.result.advice[0].resistors).toEqual(scale.resistors);
  });
});

describe('the result of a recording (the one JSON shape) and the saved-record schema', () => {
  const points = [0, 1, 2, 3];
  const rec = render(
    { hz0: 65.406, snrDb: 45, humDb: -35, scaleOctPerVolt: 1.001, seed: 15 },
    planSchedule(points, { holdSeconds: 2 }),
  );
  const a = ok(analyzeRecording(rec.samples, rec.sampleRateHz, { points }));

  it('steps, fit and advice, with the record schema key names', () => {
    const json = a.result;
    expect(Object.keys(json)).toEqual([
      'schemaVersion',
      'a4Hz',
      'clockPpm',
      'fitFromVolts',
      'fitToVolts',
      'steps',
      'fit',
      'advice',
    ]);
    expect(CalibrationResultSchema.safeParse(json).success).toBe(true);
    expect(json.steps[0].capture).toMatchObject({ source: 'window' });
    expect(json.steps[0].intervalErrorCents).toBeNull();
    expect(json.fit).toMatchObject({
      octavesPerVolt: a.fit!.octavesPerVolt,
      scaleErrorCentsPerOctave: a.fit!.scaleErrorCentsPerOctave,
      hzAt0V: a.fit!.hzAt0V,
      maxResidualCents: a.fit!.maxAbsResidualCents,
    });
    // +1.2 cents per octave of scale error (1200·(1.001 − 1), the 1 V/oct definition): the scale trimmer.
    expect(json.fit!.scaleErrorCentsPerOctave).toBeCloseTo(1.2, 1);
    expect(json.advice[0]).toMatchObject({ trimmer: 'scale', kind: 'trim' });
    expect(json.advice.map((x) => x.kind).slice(-2)).toEqual(['next', 'caution']);
    // Round trip through JSON text keeps every value (no NaN or Infinity anywhere).
    expect(JSON.parse(JSON.stringify(json))).toEqual(json);
  });

  it('the result passes the app record schema (main/ipc-contract.ts)', () => {
    const result = a.result;
    expect(RunSchema.shape.result.safeParse(result).success).toBe(true);
    expect(result.steps.map((s) => s.volts)).toEqual(points);
  });
});
