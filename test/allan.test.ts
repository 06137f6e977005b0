import { describe, expect, it } from 'vitest';
import { allanDeviation, allanSeries, subWindowRepeatability } from '../dsp/pitch/index.ts';
import { gaussianNoise } from './signals.ts';

/**
 * Independent implementation from phase data: x_i = τ₀·Σ_{j<i} y_j and
 * σ²_y(mτ₀) = Σ (x_{i+2m} − 2x_{i+m} + x_i)² / (2·m²τ₀²·(N+1−2m))
 * (NIST SP 1065, W. J. Riley, "Handbook of Frequency Stability Analysis", 2008, §5.2.4, eq. 12: the
 * overlapping Allan variance from phase data).
 */
function adevFromPhase(y: ArrayLike<number>, m: number, tau0 = 1): number {
  const x = new Float64Array(y.length + 1);
  for (let i = 0; i < y.length; i++) x[i + 1] = x[i] + tau0 * y[i];
  const n = x.length;
  let s = 0;
  for (let i = 0; i + 2 * m < n; i++) {
    const d = x[i + 2 * m] - 2 * x[i + m] + x[i];
    s += d * d;
  }
  return Math.sqrt(s / (2 * m * m * tau0 * tau0 * (n - 2 * m)));
}

describe('allanDeviation', () => {
  it('worked by hand: y = 1, 3, 1, 3 gives √(½·⟨(±2)²⟩) = √2 at m = 1', () => {
    // Two-sample variance ½⟨(y_{i+1} − y_i)²⟩ (IEEE Std 1139-2008), worked by hand.
    expect(allanDeviation([1, 3, 1, 3], 1)).toBeCloseTo(Math.SQRT2, 12);
  });

  it.each([1, 2, 3, 7, 32, 100])('agrees with the phase-data form of NIST SP 1065 eq. 12 at m = %i', (m) => {
    const y = gaussianNoise(500, 1, 11 + m);
    for (let i = 0; i < y.length; i++) y[i] += 0.001 * i + Math.sin(i / 17); // drift and a slow swing
    expect(allanDeviation(y, m)).toBeCloseTo(adevFromPhase(y, m), 10);
  });

  it('white frequency noise falls as τ^−1/2 (IEEE Std 1139-2008, table 1: σ²_y = h₀/2τ)', () => {
    const sigma = 0.01;
    const y = gaussianNoise(1 << 15, sigma, 5);
    // Up to m = 512, where about N/m = 64 independent differences keep each point within ±15 %.
    const pts = allanSeries(y, 0.1, 64).filter((p) => p.m <= 512);
    // For white FM of variance σ² per sample the Allan variance at m samples is σ²/m.
    for (const p of pts) {
      expect(p.deviation * Math.sqrt(p.m), `m = ${p.m}`).toBeGreaterThan(sigma * 0.85);
      expect(p.deviation * Math.sqrt(p.m), `m = ${p.m}`).toBeLessThan(sigma * 1.15);
    }
    // Least-squares slope of log σ against log τ.
    const xs = pts.map((p) => Math.log(p.tauSeconds));
    const ys = pts.map((p) => Math.log(p.deviation));
    const mx = xs.reduce((a, b) => a + b) / xs.length;
    const my = ys.reduce((a, b) => a + b) / ys.length;
    let sxy = 0;
    let sxx = 0;
    for (let i = 0; i < xs.length; i++) {
      sxy += (xs[i] - mx) * (ys[i] - my);
      sxx += (xs[i] - mx) ** 2;
    }
    expect(sxy / sxx).toBeCloseTo(-0.5, 1);
  });

  it('refuses bad input with a message naming the parameter', () => {
    expect(() => allanDeviation([1, 2, 3], 2)).toThrow(/at least 2m = 4/);
    expect(() => allanDeviation([1, 2], 0)).toThrow(/m must be an integer/);
    expect(() => allanDeviation([1, NaN], 1)).toThrow(/y\[1\] must be finite/);
    expect(() => allanSeries([1, 2], 0)).toThrow(/tau0Seconds/);
  });
});

describe('subWindowRepeatability', () => {
  it('is zero when the scatter is what the estimator errors explain', () => {
    const r = subWindowRepeatability([0, 0.001, -0.001, 0.0005], [0.01, 0.01, 0.01, 0.01]);
    expect(r.repeatabilityCents).toBe(0);
    expect(r.dof).toBe(3);
  });

  it('takes the excess two-sample scatter, widened for its few degrees of freedom', () => {
    const c = [0, 0.02, 0, 0.02, 0, 0.02, 0, 0.02];
    const r = subWindowRepeatability(c, new Array(8).fill(0));
    // Two-sample deviation √(½·0.02²) = 0.01414; t(0.975, 7)/1.96 = 2.365/1.96 (A&S table 26.10).
    expect(r.repeatabilityCents).toBeCloseTo((0.02 / Math.SQRT2) * (2.365 / 1.959964), 4);
  });
});
