// The decimator (dsp/pitch/decimate.ts) as the recording's live pass uses it: its filter meets the Kaiser design it claims, it
// changes no pitch, its output does not depend on how the input is cut into blocks, and a recording read
// decimated gives the same steps as one read at its own rate.
import { describe, expect, it } from 'vitest';
import { analyzeRecording, arraySource, decimationFactorFor, livePass } from '../dsp/recording/index.ts';
import { Decimator, PASS_FRACTION, cicTaps, decimationTaps, estimatePitch } from '../dsp/pitch/index.ts';
import { findDemoUnit, planSchedule, renderOscillator } from '../dsp/sim/index.ts';
import { rng } from './helpers/random.ts';

/** Cents between two frequencies: 1200·log2(f1/f2) (A. J. Ellis, 1885). */
const cents = (f1: number, f2: number) => 1200 * Math.log2(f1 / f2);

/** |H(e^{jω})| of FIR taps at `f` cycles per sample, by the DTFT sum (independent of the design code). */
function gainAt(h: Float64Array, f: number): number {
  let re = 0;
  let im = 0;
  for (let k = 0; k < h.length; k++) {
    re += h[k] * Math.cos(2 * Math.PI * f * k);
    im -= h[k] * Math.sin(2 * Math.PI * f * k);
  }
  return Math.hypot(re, im);
}

function sine(hz: number, fs: number, seconds: number, amp = 0.5, phase = 0): Float32Array {
  const n = Math.round(fs * seconds);
  const x = new Float32Array(n);
  for (let i = 0; i < n; i++) x[i] = amp * Math.sin((2 * Math.PI * hz * i) / fs + phase);
  return x;
}

describe('decimationFactorFor', () => {
  it('keeps at least 22.05 kHz: 2 at 44.1 and 48 kHz, 4 at 96 kHz, none below 44.1 kHz', () => {
    expect(decimationFactorFor(44_100)).toBe(2);
    expect(decimationFactorFor(48_000)).toBe(2);
    expect(decimationFactorFor(88_200)).toBe(4);
    expect(decimationFactorFor(96_000)).toBe(4);
    expect(decimationFactorFor(192_000)).toBe(8);
    expect(decimationFactorFor(22_050)).toBe(1);
    expect(decimationFactorFor(16_000)).toBe(1);
    expect(() => decimationFactorFor(Number.NaN)).toThrow(/sampleRateHz must be a positive number, got NaN/);
  });
});

describe('decimationTaps: a Kaiser-windowed sinc', () => {
  for (const d of [2, 4, 8]) {
    it(`factor ${d}: linear phase, unity at DC, flat to 0.4·fs′, 60 dB down from 0.55·fs′`, () => {
      const h = decimationTaps(d);
      expect(h.length % 2).toBe(1);
      for (let k = 0; k < h.length; k++) expect(h[k]).toBeCloseTo(h[h.length - 1 - k], 15);
      // Kaiser's length estimate N − 1 = (A − 8)/(2.285·Δω) for A = 60 dB and Δω = 2π·0.15/d
      // (Oppenheim & Schafer, Discrete-Time Signal Processing, 3rd ed., eq. 7.63).
      expect(h.length - 1).toBeGreaterThanOrEqual(Math.ceil(52 / (2.285 * ((2 * Math.PI * 0.15) / d))));
      expect(gainAt(h, 0)).toBeCloseTo(1, 12);
      // Ripple δ = 10^(−A/20) = 0.001 in both bands for a Kaiser design (same source, §7.6.1).
      for (let f = 0; f <= PASS_FRACTION / d; f += 0.002 / d) {
        expect(Math.abs(gainAt(h, f) - 1)).toBeLessThan(0.0015);
      }
      for (let f = 0.55 / d; f <= 0.5; f += 0.001) expect(gainAt(h, f)).toBeLessThan(0.0015);
    });
  }
  it('refuses a factor it was not designed for', () => {
    expect(() => decimationTaps(1)).toThrow(/factor must be an integer from 2 to 16, got 1/);
    expect(() => decimationTaps(2.5)).toThrow(/got 2.5/);
  });
});

describe('cicTaps: three cascaded moving averages', () => {
  for (const d of [1, 2, 3, 6, 48]) {
    it(`factor ${d}: 3D − 2 symmetric taps, unity gain at DC, nulls on every multiple of the output rate`, () => {
      // A third-order CIC filter is a box of D taps convolved with itself twice; its response
      // |sin(πfD)/(D·sin(πf))|³ is zero at f = k/D for k = 1 … D − 1 (Hogenauer, IEEE Trans. ASSP 29(2), 1981).
      const h = cicTaps(d);
      expect(h.length).toBe(3 * d - 2);
      for (let k = 0; k < h.length; k++) expect(h[k]).toBe(h[h.length - 1 - k]);
      expect(gainAt(h, 0)).toBeCloseTo(1, 12);
      for (let k = 1; k < d; k++) expect(gainAt(h, k / d)).toBeLessThan(1e-9);
    });
  }
  it('refuses a factor that is not a positive integer', () => {
    expect(() => cicTaps(0)).toThrow(/factor must be an integer from 1 to 1024, got 0/);
  });
});

describe('Decimator', () => {
  it('gives the same output however the input is cut into blocks', () => {
    const r = rng(11);
    const x = new Float32Array(50_000);
    for (let i = 0; i < x.length; i++) x[i] = r() - 0.5;
    const whole = new Decimator(4);
    const a = new Float32Array(whole.outputLength(x.length));
    const na = whole.push(x, a);
    const pieces = new Decimator(4);
    const b = new Float32Array(na + 16);
    let nb = 0;
    for (let at = 0; at < x.length;) {
      const len = Math.min(x.length - at, 1 + Math.floor(r() * 7000));
      const out = new Float32Array(pieces.outputLength(len));
      const n = pieces.push(x.subarray(at, at + len), out);
      b.set(out.subarray(0, n), nb);
      nb += n;
      at += len;
    }
    expect(nb).toBe(na);
    expect(na).toBe(Math.ceil(x.length / 4));
    for (let i = 0; i < na; i++) expect(b[i]).toBe(a[i]);
  });

  it('takes taps of even length too (a CIC filter by an even factor), with a half-sample delay', () => {
    // The same comparison as below with cicTaps(6), 16 taps: output m holds input time m·6 − 7.5.
    const fs = 48_000;
    const x = sine(20, fs, 1);
    const d = new Decimator(6, cicTaps(6));
    expect(d.delayFrames).toBe(7.5);
    const y = new Float32Array(d.outputLength(x.length));
    const n = d.push(x, y);
    expect(n).toBe(8000);
    for (const m of [1000, 4001, 7000]) {
      const t = (m * 6 - d.delayFrames) / fs;
      // The CIC filter's gain at 20 Hz is 1 − 4·10⁻⁵ (its sinc³ response, same source): within 1e-4.
      expect(Math.abs(y[m] - 0.5 * Math.sin(2 * Math.PI * 20 * t))).toBeLessThan(1e-4);
    }
  });

  it('refuses taps that are not symmetric (they would move the pitch with frequency)', () => {
    expect(() => new Decimator(2, Float64Array.from([0.5, 0.3, 0.2]))).toThrow(
      /taps must be symmetric \(linear phase\): tap 0 is 0.5, tap 2 is 0.2/,
    );
    expect(() => new Decimator(0, cicTaps(1))).toThrow(/factor must be a positive integer, got 0/);
  });

  it('changes no pitch: a 1 kHz sine at 48 kHz reads 1 kHz at 12 kHz, delayed by half the filter', () => {
    const fs = 48_000;
    const x = sine(1000, fs, 1);
    const d = new Decimator(4);
    const y = new Float32Array(d.outputLength(x.length));
    const n = d.push(x, y);
    const r = estimatePitch(y.subarray(2000, n), fs / 4);
    expect(r.kind).toBe('ok');
    if (r.kind === 'ok') expect(Math.abs(cents(r.hz, 1000))).toBeLessThan(1e-4);
    // Output m holds input time m·4 − delay: compare with the sine itself there (passband gain ≈ 1).
    for (const m of [3000, 7001, 11_000]) {
      const t = (m * 4 - d.delayFrames) / fs;
      expect(y[m]).toBeCloseTo(0.5 * Math.sin(2 * Math.PI * 1000 * t), 3);
    }
  });
});

describe('livePass decimated', () => {
  it('falls back to the full rate when the sound lies above the decimated passband (an 8 kHz sine)', () => {
    const fs = 48_000;
    const x = sine(8000, fs, 2);
    const p = livePass(arraySource(x, fs), { readingsPerSecond: 10 });
    const okHz = p.readings.flatMap((r) => (r.kind === 'ok' ? [r.hz] : []));
    expect(okHz.length).toBeGreaterThan(10);
    for (const hz of okHz) expect(Math.abs(cents(hz, 8000))).toBeLessThan(0.01);
  });

  it('stamps readings in the recording’s own time: a step from 110 to 220 Hz shows at 1 s either way', () => {
    const fs = 48_000;
    const x = new Float32Array(2 * fs);
    x.set(sine(110, fs, 1));
    x.set(sine(220, fs, 1), fs);
    const opts = { readingsPerSecond: 20, liveHarmonics: 4, minCycles: 20, minWindowSeconds: 0.1 };
    const firstHigh = (decimate: boolean) =>
      livePass(arraySource(x, fs), { ...opts, decimate }).readings.find((r) => r.kind === 'ok' && r.hz > 200)
        ?.timeSeconds;
    const full = firstHigh(false);
    const dec = firstHigh(true);
    expect(full).toBeDefined();
    expect(dec).toBeDefined();
    // The same reading grid, moved by less than the filter's delay (about 2 ms at 48 kHz); a window that
    // straddles the step may read either side, so the step shows at the same reading or the next.
    expect(Math.abs(dec! - full!)).toBeLessThan(0.05 + 0.003);
    // Stamps are window ends: the first 220 Hz reading comes after the step, within the tracker's warm-up.
    expect(dec!).toBeGreaterThan(1);
    expect(dec!).toBeLessThan(1.3);
  });

  it('a stepped recording gives the same steps, within their uncertainty, read decimated or not', () => {
    // Demo unit OL3-0423 of the invented Ostlund Lane batch (dsp/sim): HF droop, thermal tails.
    const unit = findDemoUnit('ol3-0423')!;
    const points = [0, 1, 2, 3, 4, 5, 6, 7];
    const rec = renderOscillator(
      { ...unit.options, snrDb: 45, humHz: 50, humDb: -35, seed: 5 },
      planSchedule(points, { holdSeconds: 2.5, glideSeconds: 0.15 }),
    );
    const a = analyzeRecording(rec.samples, rec.sampleRateHz, { points, decimateLivePass: false });
    const b = analyzeRecording(rec.samples, rec.sampleRateHz, { points });
    if (a.kind !== 'ok' || b.kind !== 'ok') throw new Error('both analyses should succeed');
    a.steps.forEach((s, i) => {
      const t = b.steps[i];
      const u = Math.hypot(s.uncertaintyCents, t.uncertaintyCents);
      expect(Math.abs(cents(s.hz, t.hz))).toBeLessThanOrEqual(2 * u + 1e-6);
      // And each against the simulator's truth (the recording's own time base), within 2u.
      const truth = rec.truth[i].recordedHz;
      expect(Math.abs(cents(t.hz, truth))).toBeLessThanOrEqual(2 * t.uncertaintyCents + 0.005);
    });
  });
});
