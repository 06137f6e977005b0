import { describe, it, expect } from 'vitest';
import { linearRegression } from 'simple-statistics';
import { analyzeDrift, driftRateSeries, type DriftReading } from '../dsp/calibration/index.ts';
import { gaussianNoise } from './signals.ts';

/** Readings every `dt` s for `seconds`, with pitch offset `cents(t)` on 220 Hz plus noise. */
function readings(
  seconds: number,
  dt: number,
  cents: (t: number) => number,
  noise = 0,
  seed = 1,
): DriftReading[] {
  const n = Math.floor(seconds / dt) + 1;
  const nz = gaussianNoise(n, noise, seed);
  return Array.from({ length: n }, (_, i) => ({
    timeSeconds: i * dt,
    hz: 220 * 2 ** ((cents(i * dt) + nz[i]) / 1200),
  }));
}

describe('driftRateSeries', () => {
  it('is the least-squares slope over each trailing window (simple-statistics linearRegression)', () => {
    const r = readings(600, 2, (t) => 3 * (1 - Math.exp(-t / 200)), 0.02, 3);
    const series = driftRateSeries(r, { windowSeconds: 120 });
    expect(series.length).toBeGreaterThan(0);
    for (const p of [series[0], series[Math.floor(series.length / 2)], series[series.length - 1]]) {
      const win = r.filter((x) => x.timeSeconds >= p.timeSeconds - 120 && x.timeSeconds <= p.timeSeconds);
      // simple-statistics 7.12 linearRegression on (t, cents).
      const ref = linearRegression(win.map((x) => [x.timeSeconds, 1200 * Math.log2(x.hz / r[0].hz)]));
      expect(p.centsPerMinute).toBeCloseTo(ref.m * 60, 9);
    }
    expect(series[0].timeSeconds).toBe(120);
  });

  it('is exact for a linear drift', () => {
    const series = driftRateSeries(
      readings(300, 1, (t) => (0.25 * t) / 60),
      { windowSeconds: 60 },
    );
    series.forEach((p) => expect(p.centsPerMinute).toBeCloseTo(0.25, 9));
  });
});

describe('analyzeDrift', () => {
  it('finds the warm-up time of an exponential settling', () => {
    // Thermal tail: c(t) = 5·(1 − e^(−t/τ)), τ = 300 s; rate = 5/τ·e^(−t/τ)·60 cents/min. Over a 120 s
    // window the slope of an exponential is (e^(W/τ) − 1)/(W/τ) times the rate at the window's end, so it
    // first falls under 0.1 cent/min at the end time t = τ·ln(60·5/τ/0.1 · (e^(W/τ) − 1)/(W/τ)) to within the
    // least-squares weighting (derived); 0.1 cent/min is the docs/facts.md warm-up criterion (common practice).
    const tau = 300;
    const W = 120;
    const r = readings(3600, 1, (t) => 5 * (1 - Math.exp(-t / tau)), 0.001, 4);
    const d = analyzeDrift(r, { windowSeconds: W });
    expect(d.kind).toBe('settled');
    if (d.kind !== 'settled') return;
    const predicted = tau * Math.log(((60 * 5) / tau / 0.1) * ((Math.exp(W / tau) - 1) / (W / tau)));
    expect(Math.abs(d.warmUpSeconds - predicted)).toBeLessThan(3);
    expect(Math.abs(d.driftRateCentsPerMinute)).toBeLessThan(0.1);
    expect(d.maxSettledRateCentsPerMinute).toBeLessThan(0.1);
    const expectedTotal = 5 * (Math.exp(-d.settledAtSeconds / tau) - Math.exp(-3600 / tau));
    expect(d.totalDriftCents).toBeCloseTo(expectedTotal, 2);
  });

  it('reports not-yet-settled while the rate stays above the threshold', () => {
    const d = analyzeDrift(readings(900, 1, (t) => (0.5 * t) / 60));
    expect(d.kind).toBe('not-yet-settled');
    if (d.kind !== 'not-yet-settled') return;
    expect(d.driftRateCentsPerMinute).toBeCloseTo(0.5, 6);
    expect(d.totalDriftCents).toBeCloseTo(7.5, 6);
  });

  it('needs the settled stretch to last confirmSeconds', () => {
    // Drifts at 0.5 cent/min for 600 s, then stops: the last 120 s window is flat only at the very end.
    const r = readings(730, 1, (t) => (Math.min(t, 600) * 0.5) / 60);
    expect(analyzeDrift(r).kind).toBe('not-yet-settled');
    expect(analyzeDrift(r, { confirmSeconds: 0 }).kind).toBe('settled');
  });

  it('gives typed non-answers', () => {
    expect(analyzeDrift(readings(2, 1, () => 0).slice(0, 2))).toEqual({
      kind: 'none',
      reason: 'too-few-readings',
    });
    expect(analyzeDrift(readings(60, 1, () => 0))).toEqual({ kind: 'none', reason: 'shorter-than-window' });
  });

  it('rejects invalid input', () => {
    expect(() =>
      analyzeDrift([
        { timeSeconds: 0, hz: 1 },
        { timeSeconds: 0, hz: 1 },
      ]),
    ).toThrow('readings[1].timeSeconds must be greater than readings[0].timeSeconds (0), got 0');
    expect(() => analyzeDrift([{ timeSeconds: 0, hz: 0 }])).toThrow(
      'readings[0].hz must be a finite number greater than 0, got 0',
    );
    expect(() => analyzeDrift([], { windowSeconds: 0 })).toThrow(
      'windowSeconds must be a finite number greater than 0, got 0',
    );
    expect(() => analyzeDrift([], { thresholdCentsPerMinute: -1 })).toThrow(
      'thresholdCentsPerMinute must be a finite number greater than 0, got -1',
    );
  });
});

describe('drift rate with its uncertainty', () => {
  it('gives the slope standard error of the textbook regression formula (Bevington & Robinson ch. 6, derived)', () => {
    const r = readings(200, 1, (t) => 0.001 * t + 0.05 * Math.sin(t * 1.7), 0.0001, 4);
    const series = driftRateSeries(r, { windowSeconds: 120 });
    const last = series[series.length - 1];
    const win = r.filter((x) => x.timeSeconds >= r[r.length - 1].timeSeconds - 120);
    const ts = win.map((x) => x.timeSeconds);
    const cs = win.map((x) => 1200 * Math.log2(x.hz / r[0].hz));
    const m = ts.length;
    const tm = ts.reduce((a, b) => a + b, 0) / m;
    const cm = cs.reduce((a, b) => a + b, 0) / m;
    const sxx = ts.reduce((a, t) => a + (t - tm) ** 2, 0);
    const b = ts.reduce((a, t, i) => a + (t - tm) * (cs[i] - cm), 0) / sxx;
    const rss = ts.reduce((a, t, i) => a + (cs[i] - cm - b * (t - tm)) ** 2, 0);
    expect(last.centsPerMinute).toBeCloseTo(b * 60, 8);
    expect(last.stdErrCentsPerMinute).toBeCloseTo(Math.sqrt(rss / (m - 2) / sxx) * 60, 8);
    expect(last.count).toBe(m);
  });

  it('is not postponed by 0.3 cent of reading noise (issue 9: it was by 20 minutes)', () => {
    const tau = 300;
    const clean = analyzeDrift(readings(3600, 1, (t) => 5 * (1 - Math.exp(-t / tau)), 0.001, 4));
    const noisy = analyzeDrift(readings(3600, 1, (t) => 5 * (1 - Math.exp(-t / tau)), 0.3, 9));
    expect(clean.kind).toBe('settled');
    expect(noisy.kind).toBe('settled');
    if (clean.kind !== 'settled' || noisy.kind !== 'settled') return;
    // The bound adds about 1.65 standard errors (0.047 cent/min for 0.3 cent noise over 120 readings), so the
    // verdict comes a little later than the noiseless one, never 20 minutes later.
    expect(noisy.warmUpSeconds - clean.warmUpSeconds).toBeLessThan(300);
    expect(noisy.rateUpperBoundCentsPerMinute).toBeLessThan(0.1 + 0.2);
    expect(noisy.driftRateStdErrCentsPerMinute).toBeGreaterThan(0.02);
    expect(noisy.driftRateStdErrCentsPerMinute).toBeLessThan(0.08);
    // The fitted total averages the noise away: within 0.1 cent of the true drift since settling.
    const trueTotal = 5 * (Math.exp(-noisy.settledAtSeconds / tau) - Math.exp(-3600 / tau));
    expect(Math.abs(noisy.totalDriftFittedCents - trueTotal)).toBeLessThan(0.1);
  });

  it('does not call a unit warm while the rate is above 0.1 cent per minute, noise or not', () => {
    const d = analyzeDrift(readings(1800, 1, (t) => (0.15 * t) / 60, 0.3, 3));
    expect(d.kind).toBe('not-yet-settled');
  });
});
