import { mkdtemp, readFile, readdir, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PitchDetector } from 'pitchy';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import wavefile from 'wavefile';
import { CliError } from '../cli/errors.ts';
import { main, type TruthFile } from '../cli/simulate.ts';
import { parsePlanOption } from '../cli/args.ts';
import {
  bulkResistanceAlpha,
  controlVoltsAt,
  createOscillatorStream,
  demoUnits,
  findDemoUnit,
  harmonicCoefficients,
  idealHz,
  planSchedule,
  renderOscillator,
  resolveOscillatorOptions,
  scheduleSeconds,
  trueHz,
  warmupDriftCents,
  warmupSecondsUntil,
  type OscillatorOptions,
  type OscillatorShape,
  type ScheduleSegment,
} from '../dsp/sim/index.ts';

// ---------------------------------------------------------------------------------------------------------
// Measurement helpers (independent of the model: plain signal arithmetic)
// ---------------------------------------------------------------------------------------------------------

/** Cents from b up to a: 1200·log2(a/b) (A. J. Ellis, 1885). */
const cents = (a: number, b: number): number => 1200 * Math.log2(a / b);

/** Level ratio in dB of two powers: 10·log10(p1/p2) (definition of the decibel, IEC 60027-3). */
const powerDb = (p1: number, p2: number): number => 10 * Math.log10(p1 / p2);

function meanSquare(x: ArrayLike<number>, from = 0, to = x.length): number {
  let s = 0;
  for (let i = from; i < to; i++) s += x[i] * x[i];
  return s / (to - from);
}

/**
 * Mean frequency of a clean sine between two samples: whole cycles between the first and last rising zero
 * crossing (linearly interpolated) over the time between them (common practice, no source).
 */
function meanHz(x: ArrayLike<number>, fs: number, from: number, to: number): number {
  let first = NaN;
  let last = NaN;
  let cycles = 0;
  for (let i = from + 1; i < to; i++) {
    const a = x[i - 1];
    const b = x[i];
    if (a < 0 && b >= 0) {
      const t = (i - 1 + a / (a - b)) / fs;
      if (Number.isNaN(first)) first = t;
      else {
        last = t;
        cycles++;
      }
    }
  }
  return cycles / (last - first);
}

/**
 * Amplitude of the component at `hz`: DFT at that exact frequency under a 4-term Blackman–Harris window
 * (sidelobes −92 dB; F. J. Harris, "On the use of windows…", Proc. IEEE 66(1), 1978).
 */
function toneAmplitude(x: ArrayLike<number>, fs: number, hz: number): number {
  const n = x.length;
  let re = 0;
  let im = 0;
  let wSum = 0;
  const w0 = (2 * Math.PI) / (n - 1);
  const wt = (2 * Math.PI * hz) / fs;
  for (let i = 0; i < n; i++) {
    const w =
      0.35875 - 0.48829 * Math.cos(w0 * i) + 0.14128 * Math.cos(2 * w0 * i) - 0.01168 * Math.cos(3 * w0 * i);
    re += w * x[i] * Math.cos(wt * i);
    im -= w * x[i] * Math.sin(wt * i);
    wSum += w;
  }
  return (2 * Math.hypot(re, im)) / wSum;
}

/** Complex amplitude at `hz` over a whole number of cycles (plain DFT, rectangular window). */
function phasor(x: ArrayLike<number>, fs: number, hz: number, from: number, to: number): [number, number] {
  let re = 0;
  let im = 0;
  const wt = (2 * Math.PI * hz) / fs;
  for (let i = from; i < to; i++) {
    re += x[i] * Math.cos(wt * i);
    im -= x[i] * Math.sin(wt * i);
  }
  return [(2 * re) / (to - from), (2 * im) / (to - from)];
}

/** A clean, DC-coupled sine: the easiest signal to measure. */
const CLEAN_SINE: OscillatorOptions = { shape: 'sine', acCouplingHz: 0 };

// ---------------------------------------------------------------------------------------------------------
// The model against the physics (tables of exact values)
// ---------------------------------------------------------------------------------------------------------

describe('reset time', () => {
  // docs/facts.md, "The exponential converter": error −1200·log2(1 + f·t); for 1 µs −1.730 cents at 1 kHz,
  // −6.9 at 4 kHz, −13.8 at 8 kHz (derived values, stated to the digits given).
  describe.each([
    { hz: 1000, expected: -1.73, digits: 3 },
    { hz: 4000, expected: -6.9, digits: 1 },
    { hz: 8000, expected: -13.8, digits: 1 },
  ])('1 µs at $hz Hz', ({ hz, expected, digits }) => {
    it(`is ${expected} cents`, () => {
      const f = trueHz(0, { hz0: hz, resetSeconds: 1e-6 });
      expect(cents(f, hz)).toBeCloseTo(expected, digits);
      expect(cents(f, hz)).toBeCloseTo(-1200 * Math.log2(1 + hz * 1e-6), 10);
    });
  });

  it('bends as ln(f/f_ideal) = ln(1 − f·t) in terms of the measured frequency', () => {
    // docs/facts.md: "a reset time gives ln(f/f_ideal) = ln(1 − f·t)".
    const t = 2e-6;
    for (const volts of [0, 2, 4, 6, 7.5]) {
      const f = trueHz(volts, { hz0: 55, resetSeconds: t });
      expect(Math.log(f / idealHz(volts, { hz0: 55 }))).toBeCloseTo(Math.log(1 - f * t), 12);
    }
  });

  it('shows in a rendered tone: 1 µs at 1 kHz measures −1.730 cents', () => {
    const fs = 48_000;
    const r = renderOscillator({ ...CLEAN_SINE, hz0: 1000, resetSeconds: 1e-6 }, [
      { volts: 0, holdSeconds: 0.3 },
    ]);
    expect(cents(meanHz(r.samples, fs, 0, r.samples.length), 1000)).toBeCloseTo(-1.73, 2); // docs/facts.md
    expect(r.truth[0].errorCents).toBeCloseTo(-1.73, 3);
  });
});

describe('bulk emitter resistance', () => {
  // docs/facts.md: one octave at the base is VT·ln2 = 17.510 mV at 20 °C, 17.809 at 25 °C, 17.928 at 27 °C,
  // 19.302 at 50 °C, with k/q exact (BIPM SI Brochure, 9th ed.). bulkResistanceAlpha(1 Ω, 1 A, 1 Hz) = 1/VT.
  describe.each([
    { celsius: 20, mV: 17.51 },
    { celsius: 25, mV: 17.809 },
    { celsius: 27, mV: 17.928 },
    { celsius: 50, mV: 19.302 },
  ])('thermal voltage at $celsius °C', ({ celsius, mV }) => {
    it(`gives ${mV} mV per octave`, () => {
      const vt = 1 / bulkResistanceAlpha(1, 1, 1, celsius + 273.15);
      expect(vt * Math.LN2 * 1000).toBeCloseTo(mV, 3);
    });
  });

  // docs/facts.md: the error is −1200·Ic·R/(VT·ln2): 1 Ω at 100 µA is −6.7 cents, at 1 mA −67 cents.
  // The core here draws 100 µA at 1 kHz, so 1 mA is reached at 10 kHz.
  describe.each([
    { amps: 100e-6, hz: 1000, expected: -6.7, digits: 1 },
    { amps: 1e-3, hz: 10_000, expected: -67, digits: 0 },
  ])('1 Ω at $amps A', ({ amps, hz, expected, digits }) => {
    it(`is ${expected} cents`, () => {
      const alpha = bulkResistanceAlpha(1, 100e-6, 1000);
      // Choose hz0 so the core actually runs at `hz` (the current is the actual current).
      const hz0 = hz * Math.exp(alpha * hz);
      const f = trueHz(0, { hz0, bulkAlphaSeconds: alpha });
      expect(f).toBeCloseTo(hz, 8);
      expect(cents(f, hz0)).toBeCloseTo(expected, digits);
      const vt = (1.380649e-23 / 1.602176634e-19) * 298.15;
      expect(cents(f, hz0)).toBeCloseTo((-1200 * amps * 1) / (vt * Math.LN2), 9);
    });
  });

  it('gives a log-frequency error exactly proportional to the measured frequency, ln(f/f_ideal) = −α·f', () => {
    // docs/facts.md: "bulk resistance gives a log-frequency error exactly proportional to f".
    const alpha = 4e-6;
    for (const volts of [0, 1, 3, 5, 7]) {
      const f = trueHz(volts, { hz0: 55, bulkAlphaSeconds: alpha });
      expect(Math.log(f / idealHz(volts, { hz0: 55 })) / f).toBeCloseTo(-alpha, 15);
    }
  });
});

describe('scale error', () => {
  // With scale s (octaves per volt), f = hz0·2^(s·V); the interval from 0 V is 1200·s·V cents (Ellis, 1885).
  describe.each([0.997, 1, 1.0035])('s = %s', (s) => {
    it('follows hz0·2^(s·V) in the model and in the truth', () => {
      const o = { hz0: 55, scaleOctPerVolt: s };
      for (const v of [-1, 0, 1, 2.5, 7]) {
        expect(trueHz(v, o) / (55 * Math.pow(2, s * v))).toBeCloseTo(1, 12);
        expect(cents(trueHz(v, o), idealHz(v, o))).toBeCloseTo(1200 * (s - 1) * v, 9);
      }
    });
  });

  it('shows in the rendered holds: 0.997 is −3.6 cents per octave', () => {
    const fs = 48_000;
    const s = 0.997;
    const plan = [0, 1, 2, 3];
    const r = renderOscillator(
      { ...CLEAN_SINE, hz0: 55, scaleOctPerVolt: s },
      planSchedule(plan, { holdSeconds: 0.4, glideSeconds: 0.05 }),
    );
    r.truth.forEach((step, i) => {
      const from = Math.round((step.endSeconds - 0.3) * fs);
      const measured = meanHz(r.samples, fs, from, Math.round(step.endSeconds * fs));
      const expected = 55 * Math.pow(2, s * plan[i]);
      expect(cents(measured, expected)).toBeCloseTo(0, 2);
      expect(step.settledHz / expected).toBeCloseTo(1, 12);
      expect(step.errorCents).toBeCloseTo(-3.6 * plan[i], 9);
    });
    // The interval 0 → 3 V: 1200·3·0.997 = 3589.2 cents.
    expect(cents(r.truth[3].settledHz, r.truth[0].settledHz)).toBeCloseTo(3589.2, 9);
  });
});

describe('interface clock error', () => {
  // docs/facts.md, "The sound card": 100 ppm is 0.173 cent; a clock error scales every frequency alike, so
  // intervals (and therefore the scale error) are immune.
  it('moves absolute pitch by 0.173 cent per 100 ppm and leaves intervals alone', () => {
    const fs = 48_000;
    const o = { ...CLEAN_SINE, hz0: 220, clockPpm: 100 };
    const r = renderOscillator(o, planSchedule([0, 1], { holdSeconds: 0.3, glideSeconds: 0 }));
    const [a, b] = r.truth;
    expect(cents(a.recordedHz, a.settledHz)).toBeCloseTo(-0.173, 3);
    const ma = meanHz(r.samples, fs, 0, Math.round(a.endSeconds * fs));
    const mb = meanHz(r.samples, fs, Math.round(b.startSeconds * fs) + 10, Math.round(b.endSeconds * fs));
    expect(cents(ma, a.settledHz)).toBeCloseTo(-0.173, 2);
    expect(cents(mb, ma)).toBeCloseTo(1200, 2);
  });
});

describe('thermal tail and warm-up', () => {
  it('creeps back after a step as tailCentsPerVolt·ΔV·exp(−t/τ) (first-order lag; common practice, no source)', () => {
    const fs = 48_000;
    const o = { ...CLEAN_SINE, hz0: 110, tailCentsPerVolt: -0.2, tailTauSeconds: 0.5 };
    const osc = createOscillatorStream(o);
    const block = new Float32Array(480);
    osc.render(block, 0);
    expect(osc.currentHz).toBeCloseTo(110, 10);
    for (let b = 0; b < 100; b++) {
      osc.render(block, 2);
      const t = ((b + 1) * block.length - 1) / fs;
      expect(osc.currentHz / trueHz(2, o, { tailCents: -0.4 * Math.exp(-t / 0.5) })).toBeCloseTo(1, 12);
    }
    // And it is in the signal: the mean pitch of the first 0.2 s after a 3 V step is flat by the mean tail.
    const r = renderOscillator(o, [
      { volts: 0, holdSeconds: 0.1 },
      { volts: 3, holdSeconds: 0.3 },
    ]);
    const step = Math.round(0.1 * fs);
    const measured = meanHz(r.samples, fs, step, step + Math.round(0.2 * fs));
    const meanTail = (-0.6 * 0.5 * (1 - Math.exp(-0.2 / 0.5))) / 0.2; // mean of −0.6·e^(−t/0.5) over 0.2 s
    expect(cents(measured, r.truth[1].settledHz)).toBeCloseTo(meanTail, 1);
    expect(meanTail).toBeCloseTo(-0.4945, 3);
  });

  it('warms up exponentially', () => {
    expect(warmupDriftCents(300, { warmupCents: -10, warmupTauSeconds: 300 })).toBeCloseTo(-10 / Math.E, 12);
    expect(warmupSecondsUntil({ warmupCents: -14, warmupTauSeconds: 420 })).toBeCloseTo(
      420 * Math.log(20),
      9,
    );
    expect(warmupSecondsUntil({ warmupCents: 0 })).toBe(0);
  });

  it('includes the warm-up drift at the end of each hold in the truth', () => {
    const o = { ...CLEAN_SINE, hz0: 110, warmupCents: -12, warmupTauSeconds: 60, warmupElapsedSeconds: 30 };
    const r = renderOscillator(o, planSchedule([0, 1], { holdSeconds: 0.2 }));
    for (const step of r.truth) {
      const drift = -12 * Math.exp(-(30 + step.endSeconds) / 60);
      expect(step.driftCents).toBeCloseTo(drift, 12);
      expect(step.settledHz / trueHz(step.volts, o, { driftCents: drift })).toBeCloseTo(1, 12);
    }
  });
});

// ---------------------------------------------------------------------------------------------------------
// Waveforms, noise, hum and the interface
// ---------------------------------------------------------------------------------------------------------

/** Fourier-series line amplitudes of the unit-peak waveforms (Oppenheim & Willsky, "Signals and Systems"). */
function seriesAmplitude(shape: OscillatorShape, k: number, d: number): number {
  switch (shape) {
    case 'saw':
      return 2 / (Math.PI * k);
    case 'square':
      return k % 2 ? 4 / (Math.PI * k) : 0;
    case 'triangle':
      return k % 2 ? 8 / (Math.PI * Math.PI * k * k) : 0;
    case 'pulse':
      return (4 / (Math.PI * k)) * Math.abs(Math.sin(Math.PI * k * d)); // rectangular pulse train
    case 'sine':
      return k === 1 ? 1 : 0;
  }
}

describe.each<{ shape: OscillatorShape; width: number }>([
  { shape: 'saw', width: 0.25 },
  { shape: 'square', width: 0.25 },
  { shape: 'triangle', width: 0.25 },
  { shape: 'pulse', width: 0.2 },
  { shape: 'sine', width: 0.25 },
])('band-limited $shape', ({ shape, width }) => {
  const fs = 48_000;
  const hz = 1234.5;
  const amp = 0.5;
  const r = renderOscillator(
    { shape, pulseWidth: width, hz0: hz, amplitude: amp, acCouplingHz: 0, sampleRateHz: fs },
    [{ volts: 0, holdSeconds: 16384 / fs }],
  );
  const fund = amp * seriesAmplitude(shape, 1, width);

  it('has the Fourier-series harmonics below the band limit', () => {
    for (let k = 1; k * hz < 0.44 * fs; k++) {
      const measured = toneAmplitude(r.samples, fs, k * hz);
      expect(Math.abs(measured - amp * seriesAmplitude(shape, k, width)), `harmonic ${k}`).toBeLessThan(
        1e-4 * fund,
      );
    }
  });

  it('has nothing at or above 0.45·fs and no aliases (below −80 dB)', () => {
    for (let k = Math.ceil((0.45 * fs) / hz); k <= 40; k++) {
      const f = k * hz;
      const folded = Math.abs(f - fs * Math.round(f / fs)); // where an unfiltered harmonic would land
      if (f < fs / 2) expect(toneAmplitude(r.samples, fs, f), `harmonic ${k}`).toBeLessThan(1e-4 * fund);
      expect(toneAmplitude(r.samples, fs, folded), `alias of ${k}`).toBeLessThan(1e-4 * fund);
    }
  });

  it('matches the model coefficients', () => {
    const c = harmonicCoefficients(shape, 3, width);
    expect(Math.hypot(c.sin, c.cos)).toBeCloseTo(seriesAmplitude(shape, 3, width), 12);
  });
});

describe('pulse mean', () => {
  it('is 2d − 1 of the amplitude when DC-coupled (from the waveform definition)', () => {
    const r = renderOscillator(
      { shape: 'pulse', pulseWidth: 0.1, hz0: 480, amplitude: 0.5, acCouplingHz: 0 },
      [{ volts: 0, holdSeconds: 0.1 }],
    );
    let s = 0;
    for (let i = 0; i < 4800; i++) s += r.samples[i]; // 48 whole cycles
    expect(s / 4800).toBeCloseTo(0.5 * (2 * 0.1 - 1), 3);
  });
});

describe('noise and hum levels', () => {
  const fs = 48_000;
  const base = { hz0: 440, acCouplingHz: 0, sampleRateHz: fs };
  const hold: ScheduleSegment[] = [{ volts: 0, holdSeconds: 1 }];

  describe.each<{ shape: OscillatorShape; hz0: number; snrDb: number }>([
    { shape: 'sine', hz0: 440, snrDb: 30 },
    { shape: 'sine', hz0: 440, snrDb: 45 },
    { shape: 'saw', hz0: 110, snrDb: 20 },
  ])('$shape at SNR $snrDb dB', ({ shape, hz0, snrDb }) => {
    it('measures as asked (power ratio) and is white', () => {
      const clean = renderOscillator({ ...base, shape, hz0 }, hold).samples;
      const noisy = renderOscillator({ ...base, shape, hz0, snrDb, seed: 7 }, hold).samples;
      const noise = noisy.map((v, i) => v - clean[i]);
      const measured = powerDb(meanSquare(clean), meanSquare(noise));
      expect(Math.abs(measured - snrDb), `measured ${measured.toFixed(3)} dB`).toBeLessThan(0.1);
      let r1 = 0;
      for (let i = 1; i < noise.length; i++) r1 += noise[i] * noise[i - 1];
      expect(Math.abs(r1 / (noise.length - 1) / meanSquare(noise))).toBeLessThan(0.02); // 4σ for N = 48 000
    });
  });

  describe.each([
    { humHz: 50, humDb: -30 },
    { humHz: 60, humDb: -35 },
    { humHz: 50, humDb: -10 },
  ])('hum at $humHz Hz, $humDb dB', ({ humHz, humDb }) => {
    it('measures as asked (power ratio), with its 2nd and 3rd harmonics', () => {
      const clean = renderOscillator({ ...base, shape: 'sine' }, hold).samples;
      const hummy = renderOscillator({ ...base, shape: 'sine', humHz, humDb }, hold).samples;
      const hum = hummy.map((v, i) => v - clean[i]);
      expect(powerDb(meanSquare(hum), meanSquare(clean))).toBeCloseTo(humDb, 2);
      const a1 = toneAmplitude(hum, fs, humHz);
      expect(toneAmplitude(hum, fs, 2 * humHz) / a1).toBeCloseTo(0.3, 3);
      expect(toneAmplitude(hum, fs, 3 * humHz) / a1).toBeCloseTo(0.2, 3);
    });
  });
});

describe('AC coupling', () => {
  const fs = 8000;
  const fc = 5;
  // Textbook first-order RC high-pass: H(f) = 1/(1 − j·fc/f): |H| = 1/√(1 + (fc/f)²), phase lead atan(fc/f);
  // −3.01 dB and +45° at the corner (e.g. Horowitz & Hill, "The Art of Electronics", ch. 1).
  describe.each([2.5, 5, 10, 50])('a sine at %s Hz through a 5 Hz corner', (hz) => {
    it('has the RC gain and phase', () => {
      const o = { shape: 'sine' as const, hz0: hz, sampleRateHz: fs };
      const hold = [{ volts: 0, holdSeconds: 3 }];
      const dc = renderOscillator({ ...o, acCouplingHz: 0 }, hold).samples;
      const ac = renderOscillator({ ...o, acCouplingHz: fc }, hold).samples;
      const from = fs; // after 1 s, some 31 time constants
      const to = from + Math.round((fs * Math.floor(2 * hz)) / hz); // whole cycles
      const [ar, ai] = phasor(ac, fs, hz, from, to);
      const [dr, di] = phasor(dc, fs, hz, from, to);
      const gain = Math.hypot(ar, ai) / Math.hypot(dr, di);
      const phaseDeg = ((Math.atan2(ai, ar) - Math.atan2(di, dr)) * 180) / Math.PI;
      expect(gain).toBeCloseTo(1 / Math.sqrt(1 + (fc / hz) ** 2), 3);
      expect(phaseDeg).toBeCloseTo((Math.atan(fc / hz) * 180) / Math.PI, 1);
      if (hz === fc) expect(20 * Math.log10(gain)).toBeCloseTo(-3.01, 2);
    });
  });

  it('turns a DC step into a decay with time constant RC = 1/(2π·fc)', () => {
    // Step response of the RC high-pass: V·exp(−t/RC) (Horowitz & Hill, ch. 1).
    const rs = 48_000;
    const r = renderOscillator(
      { amplitude: 0, cvFeedthroughPerVolt: 0.1, acCouplingHz: fc, sampleRateHz: rs },
      [
        { volts: 0, holdSeconds: 0.05 },
        { volts: 1, holdSeconds: 0.3 },
      ],
    ).samples;
    const rc = 1 / (2 * Math.PI * fc);
    const step = Math.round(0.05 * rs);
    expect(Math.abs(r[step - 1])).toBeLessThan(1e-9); // settled DC before the step: no start-up transient
    for (const t of [0, rc, 2 * rc, 5 * rc]) {
      expect(r[step + Math.round(t * rs)] / (0.1 * Math.exp(-Math.round(t * rs) / rs / rc))).toBeCloseTo(
        1,
        3,
      );
    }
  });
});

describe('reference pitch library agrees', () => {
  it('pitchy (McLeod pitch method) reads the rendered saw at the true pitch', () => {
    // pitchy: an outside MPM implementation; its resolution is far coarser than ours, so 1 cent.
    const r = renderOscillator({ hz0: 110, snrDb: 45, humDb: -35 }, [{ volts: 2, holdSeconds: 0.2 }]);
    const window = r.samples.subarray(4096, 4096 + 4096);
    const [hz, clarity] = PitchDetector.forFloat32Array(window.length).findPitch(window, r.sampleRateHz);
    expect(clarity).toBeGreaterThan(0.9);
    expect(Math.abs(cents(hz, 440))).toBeLessThan(1);
  });
});

// ---------------------------------------------------------------------------------------------------------
// Streaming form
// ---------------------------------------------------------------------------------------------------------

describe('stream form', () => {
  const busy: OscillatorOptions = {
    shape: 'pulse',
    pulseWidth: 0.3,
    hz0: 61.7,
    scaleOctPerVolt: 0.998,
    resetSeconds: 0.8e-6,
    bulkAlphaSeconds: 2e-6,
    warmupCents: -5,
    warmupTauSeconds: 100,
    tailCentsPerVolt: -0.3,
    jitterCents: 0.05,
    snrDb: 40,
    humDb: -30,
    humHz: 60,
    dcOffset: 0.05,
    clockPpm: 35,
    seed: 42,
  };

  function renderStream(
    o: OscillatorOptions,
    total: number,
    cv: (n: number) => number | Float64Array,
  ): Float32Array {
    const osc = createOscillatorStream(o);
    const out = new Float32Array(total);
    const sizes = [128, 333, 1, 4096, 77];
    let n = 0;
    for (let b = 0; n < total; b++) {
      const len = Math.min(sizes[b % sizes.length], total - n);
      const v = cv(n);
      osc.render(out.subarray(n, n + len), typeof v === 'number' ? v : v.subarray(n, n + len));
      n += len;
    }
    return out;
  }

  function mismatches(a: Float32Array, b: Float32Array): number {
    let m = a.length === b.length ? 0 : Infinity;
    for (let i = 0; i < Math.min(a.length, b.length); i++) if (!Object.is(a[i], b[i])) m++;
    return m;
  }

  it('matches the batch form sample for sample on a steady tone, whatever the block sizes', () => {
    const batch = renderOscillator(busy, [{ volts: 2.5, holdSeconds: 0.25 }]);
    const stream = renderStream(busy, batch.samples.length, () => 2.5);
    expect(mismatches(stream, batch.samples)).toBe(0);
  });

  it('matches the batch form through glides and overshoots when fed the same control voltage', () => {
    const schedule = planSchedule([0, 3, 1], { holdSeconds: 0.1, glideSeconds: 0.05, overshootVolts: 0.2 });
    const batch = renderOscillator(busy, schedule);
    const fs = batch.sampleRateHz;
    const cv = Float64Array.from({ length: batch.samples.length }, (_, i) =>
      controlVoltsAt(schedule, i / fs),
    );
    expect(
      mismatches(
        renderStream(busy, cv.length, () => cv),
        batch.samples,
      ),
    ).toBe(0);
  });

  it('reports the true frequency, restarts on reset() and never emits NaN', () => {
    const o = { hz0: 55, resetSeconds: 1e-6, acCouplingHz: 0 };
    const osc = createOscillatorStream(o);
    const a = new Float32Array(256);
    osc.render(a, 4);
    expect(osc.currentHz).toBe(trueHz(4, o));
    expect(osc.currentVolts).toBe(4);
    expect(osc.samplesRendered).toBe(256);
    osc.reset();
    const b = new Float32Array(256);
    osc.render(b, 4);
    expect(mismatches(a, b)).toBe(0);
    osc.render(b, NaN);
    osc.render(b, [Infinity, 3]);
    expect(b.every(Number.isFinite)).toBe(true);
    expect(osc.currentVolts).toBe(3);
  });
});

// ---------------------------------------------------------------------------------------------------------
// Schedules, demo units, checking
// ---------------------------------------------------------------------------------------------------------

describe('schedules', () => {
  it('planSchedule uses the documented defaults and the truth marks each hold', () => {
    const s = planSchedule([0, 1, 2]);
    expect(s).toEqual([
      { volts: 0, holdSeconds: 3, glideSeconds: 0 },
      { volts: 1, holdSeconds: 3, glideSeconds: 0.15 },
      { volts: 2, holdSeconds: 3, glideSeconds: 0.15 },
    ]);
    expect(scheduleSeconds(s)).toBeCloseTo(9.3, 12);
    const r = renderOscillator(
      { sampleRateHz: 8000, maxHarmonics: 5 },
      planSchedule([0, 1], { holdSeconds: 0.5 }),
    );
    expect(r.samples.length).toBe(Math.round(1.15 * 8000));
    expect(r.truth.map((t) => [t.stepIndex, t.volts, t.startSeconds, t.endSeconds])).toEqual([
      [0, 0, 0, 0.5],
      [1, 1, 0.65, 1.15],
    ]);
  });

  it('glides linearly or exponentially, overshoots in the direction of travel, then holds', () => {
    const up: ScheduleSegment[] = [
      { volts: 0, holdSeconds: 1 },
      { volts: 2, holdSeconds: 1, glideSeconds: 1, overshootVolts: 0.1, overshootSeconds: 0.5 },
    ];
    expect(controlVoltsAt(up, 1.5)).toBeCloseTo(1.05, 12); // halfway to the 2.1 V peak
    expect(controlVoltsAt(up, 2)).toBeCloseTo(2.1, 12);
    expect(controlVoltsAt(up, 2.25)).toBeCloseTo(2.05, 12);
    expect(controlVoltsAt(up, 2.5)).toBe(2);
    const down: ScheduleSegment[] = [
      { volts: 2, holdSeconds: 1 },
      { volts: 0, holdSeconds: 1, glideSeconds: 1, overshootVolts: 0.1, glideShape: 'exponential' },
    ];
    expect(controlVoltsAt(down, 2)).toBeCloseTo(-0.1, 12);
    expect(controlVoltsAt(down, 1.5)).toBeLessThan(1); // exponential: most of the way by halftime
    expect(controlVoltsAt(down, 10)).toBe(0);
  });
});

describe('demo units', () => {
  const errorAt = (id: string, volts: number): number => {
    const o = findDemoUnit(id)!.options;
    return cents(trueHz(volts, o), idealHz(volts, o));
  };

  it('have unique ids and serials', () => {
    expect(new Set(demoUnits.map((u) => u.id)).size).toBe(demoUnits.length);
    expect(new Set(demoUnits.map((u) => u.serial)).size).toBe(demoUnits.length);
  });

  it('the bench reference tracks within ±1 cent from 0 to 7 V', () => {
    // docs/facts.md: ±2 cents over five octaves is a good analog result.
    for (let v = 0; v <= 7; v++) expect(Math.abs(errorAt('ol3-0412', v))).toBeLessThan(1);
  });

  it('the wide-scale unit is a few cents per octave sharp', () => {
    const perOctave = (errorAt('ol3-0417', 4) - errorAt('ol3-0417', 1)) / 3;
    expect(perOctave).toBeGreaterThan(3);
    expect(perOctave).toBeLessThan(6);
  });

  it('the HF-droop unit bends several cents flat above 2 kHz and holds below 300 Hz', () => {
    // docs/facts.md: home-built oscillators often bend several cents flat above 2 kHz.
    const o = findDemoUnit('ol3-0423')!.options;
    for (let v = 0; v <= 8; v += 0.25) {
      const hz = trueHz(v, o);
      if (hz > 2000) expect(errorAt('ol3-0423', v)).toBeLessThan(-3);
      if (hz < 300) expect(Math.abs(errorAt('ol3-0423', v))).toBeLessThan(1.5);
    }
  });

  it('the warming unit needs 15–30 minutes to drift less than 0.1 cent per minute', () => {
    // docs/facts.md: warm-up 15–30 minutes, or until the drift stays under about 0.1 cent per minute.
    const minutes = warmupSecondsUntil(findDemoUnit('ol3-0431')!.options) / 60;
    expect(minutes).toBeGreaterThan(15);
    expect(minutes).toBeLessThan(30);
  });
});

describe('misuse', () => {
  it.each<[OscillatorOptions, string]>([
    [{ scaleOctPerVolt: 3 }, 'scaleOctPerVolt must be a number from 0.5 to 1.5 octaves per volt, got 3'],
    [{ sampleRateHz: 100 }, 'sampleRateHz must be a number from 8000 to 384000 Hz, got 100'],
    [{ hz0: Infinity }, 'hz0 must be a number from 0.1 to 20000 Hz, got Infinity'],
    [
      { shape: 'sawtooth' as OscillatorShape },
      'shape must be one of saw, square, pulse, triangle, sine, got sawtooth',
    ],
    [
      { bandLimitHz: 30_000 },
      'bandLimitHz must be a number above 0 and below half the sample rate (24000 Hz), got 30000',
    ],
    [{ maxHarmonics: 2.5 }, 'maxHarmonics must be an integer from 1 to 2000, got 2.5'],
  ])('rejects %o', (options, message) => {
    expect(() => resolveOscillatorOptions(options)).toThrow(new RangeError(message));
  });

  it('rejects bad schedules, naming the segment and field', () => {
    expect(() => renderOscillator({}, [])).toThrow(
      'schedule must be a non-empty array of segments, got an empty array',
    );
    expect(() =>
      renderOscillator({}, [
        { volts: 0, holdSeconds: 1 },
        { volts: 1, holdSeconds: -1 },
      ]),
    ).toThrow('schedule[1].holdSeconds must be a number from 0 to 3600 s, got -1');
    expect(() => planSchedule([0, 13])).toThrow(
      'schedule[1].volts must be a number from -12 to 12 V, got 13',
    );
    expect(() => planSchedule([])).toThrow(
      'voltsList must be a non-empty array of volts, got an empty array',
    );
    expect(() => planSchedule([0, 1], { holdSeconds: 2000 })).toThrow(
      'schedule must last more than 0 and at most 3600 s in all, got 4000.15 s',
    );
  });
});

// ---------------------------------------------------------------------------------------------------------
// Command line
// ---------------------------------------------------------------------------------------------------------

describe('spanmeter simulate', () => {
  let dir = '';
  beforeAll(async () => {
    dir = await mkdtemp(join(tmpdir(), 'spanmeter-simulate-'));
    vi.spyOn(process.stdout, 'write').mockImplementation(() => true);
  });
  afterAll(async () => {
    vi.restoreAllMocks();
    await rm(dir, { recursive: true, force: true });
  });

  interface Fmt {
    audioFormat: number;
    numChannels: number;
    sampleRate: number;
    bitsPerSample: number;
  }
  const read = async (file: string) => {
    const wav = new wavefile.WaveFile(await readFile(join(dir, file)));
    return { fmt: wav.fmt as Fmt, samples: wav.getSamples(false, Float64Array) as unknown };
  };

  it('writes a 16-bit mono 48 kHz file by default, readable by wavefile', async () => {
    expect(await main(['--out', join(dir, 'a.wav'), '--plan', '0-2', '--hold', '0.2'])).toBe(0);
    const { fmt, samples } = await read('a.wav');
    expect(fmt).toMatchObject({ audioFormat: 1, numChannels: 1, sampleRate: 48_000, bitsPerSample: 16 });
    expect((samples as Float64Array).length).toBe(Math.round((3 * 0.2 + 2 * 0.15) * 48_000));
  });

  it('writes 24-bit stereo at another rate, and the truth file', async () => {
    const args = ['--out', join(dir, 'b.wav'), '--plan', '1,3', '--hold', '0.1', '--bits', '24'];
    args.push('--channels', '2', '--rate', '44100', '--truth', join(dir, 'b.json'), '--scale-error', '-3.6');
    expect(await main(args)).toBe(0);
    const { fmt, samples } = await read('b.wav');
    expect(fmt).toMatchObject({ audioFormat: 1, numChannels: 2, sampleRate: 44_100, bitsPerSample: 24 });
    const [left, right] = samples as Float64Array[];
    expect(left.length).toBe(Math.round(0.35 * 44_100));
    expect(Array.from(right)).toEqual(Array.from(left));
    const truth = JSON.parse(await readFile(join(dir, 'b.json'), 'utf8')) as TruthFile;
    expect(truth).toMatchObject({
      format: 'spanmeter-simulated-truth',
      version: 1,
      sampleRateHz: 44_100,
      channels: 2,
    });
    expect(truth.steps.map((s) => s.volts)).toEqual([1, 3]);
    // −3.6 cents per octave is a scale of 1 − 3.6/1200 octaves per volt.
    expect(truth.steps[1].settledHz / (55 * Math.pow(2, 3 * (1 - 3.6 / 1200)))).toBeCloseTo(1, 12);
    expect(truth.options.snrDb).toBe(45);
  });

  it('writes 32-bit float samples equal to the model with the documented recording defaults', async () => {
    expect(await main(['--out', join(dir, 'c.wav'), '--plan', '2', '--hold', '0.1', '--bits', '32f'])).toBe(
      0,
    );
    const { fmt, samples } = await read('c.wav');
    expect(fmt).toMatchObject({ audioFormat: 3, numChannels: 1, sampleRate: 48_000, bitsPerSample: 32 });
    const model = renderOscillator({ snrDb: 45, humHz: 50, humDb: -35, seed: 1 }, [
      { volts: 2, holdSeconds: 0.1 },
    ]);
    expect(Array.from(samples as Float64Array)).toEqual(Array.from(model.samples));
  });

  it('starts from a demo unit and leaves no temporary files behind', async () => {
    const args = ['--out', join(dir, 'd.wav'), '--unit', 'ol3-0423', '--plan', '6', '--hold', '0.05'];
    expect(await main([...args, '--truth', join(dir, 'd.json')])).toBe(0);
    const truth = JSON.parse(await readFile(join(dir, 'd.json'), 'utf8')) as TruthFile;
    expect(truth.unit).toBe('ol3-0423');
    expect(truth.steps[0].settledHz).toBeCloseTo(trueHz(6, findDemoUnit('ol3-0423')!.options), 9);
    expect((await readdir(dir)).filter((f) => f.endsWith('.tmp'))).toEqual([]);
  });

  it.each([
    [[], '--out FILE.wav is required'],
    [
      ['--out', 'x.wav', '--plan', '0,x'],
      '--plan: "x" is neither a voltage (like 2.5) nor a range (like 0-7 or 0:0.5:7)',
    ],
    [['--out', 'x.wav', '--plan', '0,13'], '--plan: point 2 (13 V) lies outside -12…+12 V'],
    [['--out', 'x.wav', '--bits', '8'], "--bits must be one of 16, 24, 32f, got '8'"],
    [
      ['--out', 'x.wav', '--unit', 'nope'],
      '--unit must be one of ol3-0412, ol3-0417, ol3-0423, ol3-0431, ol2-0208, got',
    ],
    [['--out', 'x.wav', '--hum', '55'], "--hum must be one of 50, 60, off, got '55'"],
    [['--out', 'x.wav', '--hold', 'long'], "--hold must be a number from 0.01 to 600 s, got 'long'"],
    [
      ['--out', 'x.wav', '--hold', '600', '--plan', '0-7'],
      'schedule must last more than 0 and at most 3600 s',
    ],
  ])('rejects %j with one clear line', async (args, message) => {
    const err = await main(args).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(CliError);
    expect((err as CliError).message).toContain(message);
    expect((err as CliError).exitCode).toBe(2);
    expect((err as CliError).message).not.toContain('\n');
  });

  it('reports a folder that cannot be written', async () => {
    const err = await main(['--out', join(dir, 'missing', 'e.wav'), '--plan', '0', '--hold', '0.05']).catch(
      (e: unknown) => e,
    );
    expect(err).toBeInstanceOf(CliError);
    expect((err as CliError).message).toMatch(/^cannot write '.*e\.wav': /);
    expect((err as CliError).exitCode).toBe(1);
  });

  it.each([
    ['0-2,5', [0, 1, 2, 5]],
    ['3-1', [3, 2, 1]],
    ['-2--1, 0.5', [-2, -1, 0.5]],
    ['0.5-2.5', [0.5, 1.5, 2.5]],
    ['0:0.5:2', [0, 0.5, 1, 1.5, 2]],
    ['0,1,0', [0, 1, 0]],
  ])('parses the plan %s (the one grammar, dsp/calibration/plan.ts)', (text, volts) => {
    expect(parsePlanOption('plan', text)).toEqual(volts);
  });
});
