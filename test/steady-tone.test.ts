// One held tone reported through its drift (dsp/recording/steady-tone.ts over dsp/calibration/drift.ts driftTrend): a tone that
// moves is reported with start, end and rate, each with an uncertainty that covers the truth; a steady one
// is called steady; a DC level is named. Signals are generated here: a sine whose frequency follows a known
// line, its phase integrated exactly, with seeded white noise (test/signals.ts).
import { describe, expect, it } from 'vitest';
import { driftTrend } from '../dsp/calibration/index.ts';
import { arraySource } from '../dsp/recording/index.ts';
import { analyzeSteadyTone, LONG_TONE_SECONDS } from '../dsp/recording/index.ts';
import { gaussianNoise } from './signals.ts';

/** A sine from f0 Hz rising `cents` over `seconds` (linear in cents), plus noise at `snrDb`. */
function driftingSine(
  f0: number,
  cents: number,
  seconds: number,
  fs: number,
  snrDb = 60,
  seed = 1,
): Float32Array {
  const n = Math.round(seconds * fs);
  const noise = gaussianNoise(n, 0.5 / Math.sqrt(2) / 10 ** (snrDb / 20), seed);
  const x = new Float32Array(n);
  // Instantaneous frequency f0·2^(c·t/(1200·T)); its phase integral is closed form.
  const k = ((cents / 1200) * Math.LN2) / seconds;
  for (let i = 0; i < n; i++) {
    const t = i / fs;
    const phase = k === 0 ? f0 * t : (f0 * (Math.exp(k * t) - 1)) / k;
    x[i] = 0.5 * Math.sin(2 * Math.PI * phase) + noise[i];
  }
  return x;
}

describe('driftTrend', () => {
  it('recovers an exact line: slope and ends (least squares, Bevington & Robinson ch. 6)', () => {
    const readings = Array.from({ length: 601 }, (_, i) => ({
      timeSeconds: i,
      hz: 440 * 2 ** ((0.1 * i) / 60 / 1200),
    }));
    const t = driftTrend(readings);
    if (t.kind !== 'ok') throw new Error('expected a trend');
    expect(t.rateCentsPerMinute).toBeCloseTo(0.1, 10);
    expect(t.driftCents).toBeCloseTo(1, 9);
    expect(t.startHz).toBeCloseTo(440, 9);
  });

  it('widens the slope’s uncertainty for correlated readings (Santer et al. 2000, n_eff)', () => {
    // AR(1) noise with φ = 0.9 on a flat line: the naive standard error would be √19 ≈ 4.4 times too small.
    let e = 0;
    const noise = gaussianNoise(2000, 0.01, 5);
    const readings = Array.from({ length: 2000 }, (_, i) => {
      e = 0.9 * e + noise[i];
      return { timeSeconds: i, hz: 440 * 2 ** (e / 1200) };
    });
    const t = driftTrend(readings);
    if (t.kind !== 'ok') throw new Error('expected a trend');
    expect(t.lag1Autocorrelation).toBeGreaterThan(0.8);
    expect(t.effectiveCount).toBeLessThan(2000 / 10);
    expect(Math.abs(t.driftCents)).toBeLessThan(3 * t.driftUncertaintyCents);
  });

  it('too few readings is a typed non-answer', () => {
    expect(driftTrend([{ timeSeconds: 0, hz: 1 }])).toEqual({ kind: 'none', reason: 'too-few-readings' });
  });
});

describe('analyzeSteadyTone', () => {
  const fs = 16000;
  it('a tone rising 1.5 cents over 90 s: a moving pitch, the drift within its uncertainty of the truth', () => {
    const x = driftingSine(220, 1.5, 90, fs, 50, 3);
    const r = analyzeSteadyTone(arraySource(x, fs));
    if (r.kind !== 'ok') throw new Error(r.message);
    expect(r.moving).toBe(true);
    const t = r.trend;
    // The line runs from the first to the last reading's centre; compare over that span.
    const trueDrift = (1.5 * (t.endSeconds - t.startSeconds)) / 90;
    expect(
      Math.abs(t.driftCents - trueDrift),
      `drift ${t.driftCents} ± ${t.driftUncertaintyCents}`,
    ).toBeLessThan(3 * t.driftUncertaintyCents + 0.01);
    expect(t.driftUncertaintyCents).toBeGreaterThan(0);
    expect(Math.abs(t.rateCentsPerMinute - 1)).toBeLessThan(3 * t.rateUncertaintyCentsPerMinute + 0.01);
    const startCents = 1200 * Math.log2(t.startHz / (220 * 2 ** ((1.5 * t.startSeconds) / 90 / 1200)));
    expect(Math.abs(startCents)).toBeLessThan(3 * t.endUncertaintyCents + 0.01);
    expect(r.drift.kind).toBe('none'); // shorter than a 2-minute window: warm-up cannot be judged
    expect(90).toBeGreaterThan(LONG_TONE_SECONDS);
  });

  it('a steady 20 s tone is steady', () => {
    const r = analyzeSteadyTone(arraySource(driftingSine(330, 0, 20, fs, 50, 4), fs));
    if (r.kind !== 'ok') throw new Error(r.message);
    expect(r.moving).toBe(false);
    expect(Math.abs(r.trend.driftCents)).toBeLessThan(3 * r.trend.driftUncertaintyCents + 0.01);
  });

  it('a DC level with nothing on it is named', () => {
    const r = analyzeSteadyTone(arraySource(new Float32Array(fs * 2).fill(0.25), fs));
    expect(r.kind === 'error' && r.message).toMatch(
      /^only a DC level, no signal: every sample sits near \+0\.2500/,
    );
  });

  it('digital silence is named', () => {
    const r = analyzeSteadyTone(arraySource(new Float32Array(fs * 2), fs));
    expect(r.kind === 'error' && r.message).toBe(
      'silence: every sample of the recording is 0 (nothing was recorded)',
    );
  });
});
