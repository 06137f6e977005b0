import { describe, it, expect } from 'vitest';
import { linearRegression, weightedLinearRegression } from 'simple-statistics';
import {
  MIN_UNCERTAINTY_CENTS,
  analyzeBends,
  fitTracking,
  predictedHz,
  predictionUncertaintyCents,
  type TrackingPoint,
} from '../dsp/model/index.ts';
import { resetTimeErrorCents } from '../dsp/converter/index.ts';
import { gaussianNoise } from './signals.ts';

/** Steps of a 1 V/oct oscillator with a scale error (cents/oct), plus extra cents per step and noise. */
function steps(
  volts: readonly number[],
  opts: {
    hzAt0V?: number;
    scaleCents?: number;
    extra?: (v: number, hz: number) => number;
    noise?: number;
    sigma?: number;
    seed?: number;
  },
): TrackingPoint[] {
  const hz0 = opts.hzAt0V ?? 32.703;
  const s = 1 + (opts.scaleCents ?? 0) / 1200;
  const noise = gaussianNoise(volts.length, opts.noise ?? 0, opts.seed ?? 1);
  return volts.map((v, i) => {
    const ideal = hz0 * 2 ** (s * v);
    const c = (opts.extra?.(v, ideal) ?? 0) + noise[i];
    return { volts: v, hz: ideal * 2 ** (c / 1200), uncertaintyCents: opts.sigma ?? 0.01 };
  });
}

describe('fitTracking against reference regressions', () => {
  describe.each([1, 2, 3])('noisy equal-weight data, seed %d', (seed) => {
    it('matches simple-statistics linearRegression', () => {
      const pts = steps([0, 1, 2, 3, 4, 5], { scaleCents: -3.2, noise: 0.2, seed });
      const fit = fitTracking(pts);
      expect(fit.kind).toBe('ok');
      if (fit.kind !== 'ok') return;
      // simple-statistics 7.12 linearRegression, an ordinary least-squares line.
      const ref = linearRegression(pts.map((p) => [p.volts, Math.log2(p.hz)]));
      expect(fit.octavesPerVolt).toBeCloseTo(ref.m, 12);
      expect(Math.log2(fit.hzAt0V)).toBeCloseTo(ref.b, 12);
    });
  });

  it('matches simple-statistics weightedLinearRegression with weights 1/σ²', () => {
    const pts = steps([0, 1, 2, 3, 4, 5, 6], { scaleCents: 2.1, noise: 0.3, seed: 4 }).map((p, i) => ({
      ...p,
      uncertaintyCents: [0.01, 0.05, 0.2, 0.02, 0.5, 0.1, 0.03][i],
    }));
    const fit = fitTracking(pts);
    if (fit.kind !== 'ok') throw new Error('expected a fit');
    // simple-statistics 7.12 weightedLinearRegression (weighted least squares, as R's lm with weights).
    const ref = weightedLinearRegression(
      pts.map((p) => [p.volts, Math.log2(p.hz)]),
      pts.map((p) => 1 / (p.uncertaintyCents / 1200) ** 2),
    );
    expect(fit.octavesPerVolt).toBeCloseTo(ref.m, 12);
    expect(Math.log2(fit.hzAt0V)).toBeCloseTo(ref.b, 12);
  });

  it('matches the closed-form weighted formulas, standard errors included', () => {
    // Bevington & Robinson, Data Reduction and Error Analysis, ch. 6: Δ = SΣx² − (Σx)², b = (SΣxy − ΣxΣy)/Δ,
    // a = (Σx²Σy − ΣxΣxy)/Δ, σ_b² = S/Δ, σ_a² = Σx²/Δ (all sums weighted by 1/σ²).
    const sig = [0.02, 0.01, 0.04, 0.01, 0.03];
    const pts = steps([1, 2, 3, 4, 5], { scaleCents: -1.5, noise: 0.005, seed: 5 }).map((p, i) => ({
      ...p,
      uncertaintyCents: sig[i],
    }));
    const w = sig.map((s) => 1 / (s / 1200) ** 2);
    const x = pts.map((p) => p.volts);
    const y = pts.map((p) => Math.log2(p.hz));
    const S = w.reduce((a, b) => a + b, 0);
    const Sx = x.reduce((a, v, i) => a + w[i] * v, 0);
    const Sy = y.reduce((a, v, i) => a + w[i] * v, 0);
    const Sxx = x.reduce((a, v, i) => a + w[i] * v * v, 0);
    const Sxy = x.reduce((a, v, i) => a + w[i] * v * y[i], 0);
    const D = S * Sxx - Sx * Sx;
    const b = (S * Sxy - Sx * Sy) / D;
    const a = (Sxx * Sy - Sx * Sxy) / D;
    const fit = fitTracking(pts);
    if (fit.kind !== 'ok') throw new Error('expected a fit');
    expect(fit.octavesPerVolt).toBeCloseTo(b, 10);
    expect(Math.log2(fit.hzAt0V)).toBeCloseTo(a, 9);
    const chi = y.reduce((acc, v, i) => acc + w[i] * (v - a - b * x[i]) ** 2, 0);
    expect(fit.chiSquared).toBeCloseTo(chi, 6);
    expect(fit.dof).toBe(3);
    const k = Math.max(1, Math.sqrt(chi / 3)); // Birge ratio (Particle Data Group practice)
    expect(fit.octavesPerVoltStdErr / (k * Math.sqrt(S / D))).toBeCloseTo(1, 8);
    expect(fit.hzAt0VStdErrCents / (1200 * k * Math.sqrt(Sxx / D))).toBeCloseTo(1, 8);
    expect(fit.scaleErrorCentsPerOctave).toBeCloseTo(1200 * (b - 1), 7);
  });
});

describe('fitTracking on exact data', () => {
  describe.each([-5, -3.2, 0, 0.7, 12])('scale error %d cents/oct', (e) => {
    it('is recovered exactly with zero residuals', () => {
      const fit = fitTracking(steps([-1, 0, 1, 2, 3, 4], { scaleCents: e, hzAt0V: 65.406 }));
      if (fit.kind !== 'ok') throw new Error('expected a fit');
      expect(fit.scaleErrorCentsPerOctave).toBeCloseTo(e, 9);
      expect(fit.hzAt0V).toBeCloseTo(65.406, 9);
      expect(fit.maxAbsResidualCents).toBeLessThan(1e-9);
      expect(predictedHz(fit, 3)).toBeCloseTo(65.406 * 2 ** (3 * (1 + e / 1200)), 9);
    });
  });

  it('two points give dof 0 and no reduced chi-squared', () => {
    const fit = fitTracking(steps([1, 3], {}));
    expect(fit).toMatchObject({ kind: 'ok', dof: 0, chiSquaredPerDof: null, birgeRatio: 1 });
  });

  it('selects the voltage range and reports indices in input order', () => {
    const pts = steps([4, 0, 3, 1, 2], { scaleCents: 1 });
    const fit = fitTracking(pts, { fromVolts: 1, toVolts: 3 });
    expect(fit).toMatchObject({ kind: 'ok', usedIndices: [2, 3, 4], fromVolts: 1, toVolts: 3 });
  });

  it('floors tiny uncertainties at 0.001 cent', () => {
    expect(MIN_UNCERTAINTY_CENTS).toBe(0.001);
    const a = fitTracking(steps([0, 1, 2, 3], { noise: 0.01, sigma: 0 }));
    const b = fitTracking(steps([0, 1, 2, 3], { noise: 0.01, sigma: 0.001 }));
    expect(a).toEqual(b);
  });

  it('prediction uncertainty is smallest near the weighted centre', () => {
    // Propagation of the fit covariance (JCGM 100:2008 §5.2): var(a + sV) is a parabola in V.
    const fit = fitTracking(steps([1, 2, 3], { noise: 0.005, seed: 2 }));
    if (fit.kind !== 'ok') throw new Error('expected a fit');
    expect(predictionUncertaintyCents(fit, 2)).toBeLessThan(predictionUncertaintyCents(fit, 1));
    expect(predictionUncertaintyCents(fit, 2)).toBeLessThan(predictionUncertaintyCents(fit, 3));
    // Three equal-σ points: var at the centre = σ²/3 (times the Birge ratio²).
    expect(predictionUncertaintyCents(fit, 2)).toBeCloseTo((fit.birgeRatio * 0.01) / Math.sqrt(3), 9);
  });

  it('gives typed non-answers', () => {
    expect(fitTracking([])).toEqual({ kind: 'none', reason: 'too-few-points' });
    expect(fitTracking(steps([1], {}))).toEqual({ kind: 'none', reason: 'too-few-points' });
    expect(fitTracking(steps([1, 1, 1], { noise: 1 }))).toEqual({ kind: 'none', reason: 'no-voltage-span' });
    expect(fitTracking(steps([0, 1, 2], {}), { fromVolts: 5 })).toEqual({
      kind: 'none',
      reason: 'too-few-points',
    });
  });

  it.each([
    [
      [{ volts: Number.NaN, hz: 100, uncertaintyCents: 0 }],
      {},
      'points[0].volts must be a finite number, got NaN',
    ],
    [
      [{ volts: 0, hz: 0, uncertaintyCents: 0 }],
      {},
      'points[0].hz must be a finite number greater than 0, got 0',
    ],
    [
      [
        { volts: 0, hz: 1, uncertaintyCents: 0 },
        { volts: 1, hz: 2, uncertaintyCents: -1 },
      ],
      {},
      'points[1].uncertaintyCents must be a finite number at least 0, got -1',
    ],
    [[], { fromVolts: 3, toVolts: 1 }, 'fromVolts (3) must not exceed toVolts (1)'],
  ])('rejects invalid input %#', (pts, opts, message) => {
    expect(() => fitTracking(pts, opts)).toThrow(message);
  });
});

describe('analyzeBends', () => {
  const volts = [0, 1, 2, 3, 4, 5, 6, 7];

  it('finds no bend in a straight line with a scale error', () => {
    const b = analyzeBends(steps(volts, { scaleCents: -3.2, noise: 0.01, seed: 3 }));
    if (b.kind !== 'ok') throw new Error('expected an analysis');
    expect(b.highEnd).toEqual({ kind: 'straight' });
    expect(b.lowEnd).toEqual({ kind: 'straight' });
    expect(b.middle.usedIndices).toHaveLength(volts.length);
    expect(b.scaleErrorCentsPerOctave).toBeCloseTo(-3.2, 1);
    expect(b.hf).toMatchObject({ kind: 'undecided', reason: 'no-hf-error' });
  });

  it('separates a reset-time droop at the top from the middle scale', () => {
    // Reset-time error −1200·log2(1 + f·t) (docs/facts.md, derived), t = 4.55 µs, top step 4186 Hz.
    const pts = steps(volts, {
      scaleCents: 1.5,
      noise: 0.01,
      seed: 6,
      extra: (_v, hz) => resetTimeErrorCents(hz, 4.55e-6),
    });
    const b = analyzeBends(pts);
    if (b.kind !== 'ok') throw new Error('expected an analysis');
    expect(b.highEnd.kind).toBe('bent');
    if (b.highEnd.kind !== 'bent') return;
    expect(b.highEnd.direction).toBe('flat');
    expect(b.highEnd.steps[0].index).toBe(7);
    expect(b.highEnd.centsAtEnd).toBeLessThan(-10);
    expect(b.lowEnd).toEqual({ kind: 'straight' });
    expect(b.hf).toMatchObject({ kind: 'ok', better: 'reset-time' });
    if (b.hf.kind === 'ok') {
      expect(b.hf.resetTime.resetSeconds / 4.55e-6).toBeCloseTo(1, 1);
      // The joint fit sees through the droop to the true scale error.
      expect(b.hf.resetTime.line?.centsPerVolt).toBeCloseTo(1.5, 1);
    }
    expect(b.highest).toMatchObject({ index: 7, volts: 7 });
  });

  it('reports a low-end bend separately', () => {
    const pts = steps(volts, { scaleCents: -2, noise: 0.01, seed: 7, extra: (v) => (v === 0 ? 3 : 0) });
    const b = analyzeBends(pts);
    if (b.kind !== 'ok') throw new Error('expected an analysis');
    expect(b.lowEnd).toMatchObject({ kind: 'bent', direction: 'sharp' });
    if (b.lowEnd.kind === 'bent') expect(b.lowEnd.centsAtEnd).toBeCloseTo(3, 1);
    expect(b.highEnd).toEqual({ kind: 'straight' });
    expect(b.scaleErrorCentsPerOctave).toBeCloseTo(-2, 1);
    expect(b.deviationsCents[0]).toBeCloseTo(3, 1);
  });

  it('keeps at least minMiddlePoints steps', () => {
    const pts = steps([0, 1, 2, 3, 4], { extra: (v) => (v === 0 ? 4 : v === 4 ? -8 : 0), noise: 0.01 });
    const both = analyzeBends(pts, { minMiddlePoints: 3 });
    expect(both.kind === 'ok' && both.middle.usedIndices).toEqual([1, 2, 3]);
    // Only the top bends, over two steps: with four steps required in the middle, only one goes.
    const top = steps([0, 1, 2, 3, 4], { extra: (v) => (v === 3 ? -3 : v === 4 ? -12 : 0), noise: 0.01 });
    const one = analyzeBends(top, { minMiddlePoints: 4 });
    expect(one.kind === 'ok' && one.middle.usedIndices).toEqual([0, 1, 2, 3]);
    const two = analyzeBends(top, { minMiddlePoints: 3 });
    expect(two.kind === 'ok' && two.highEnd.kind === 'bent' && two.highEnd.steps.map((x) => x.index)).toEqual(
      [4, 3],
    );
  });

  it('ignores sub-threshold curvature (minBendCents)', () => {
    const pts = steps(volts, { extra: (v) => (v === 7 ? -0.3 : 0), noise: 0.001, sigma: 0.001 });
    const b = analyzeBends(pts);
    expect(b.kind === 'ok' && b.highEnd.kind).toBe('straight');
    const c = analyzeBends(pts, { minBendCents: 0.1 });
    expect(c.kind === 'ok' && c.highEnd.kind).toBe('bent');
  });

  it('gives typed non-answers and rejects bad options', () => {
    expect(analyzeBends(steps([1], {}))).toEqual({ kind: 'none', reason: 'too-few-points' });
    expect(() => analyzeBends(steps(volts, {}), { sigma: 0 })).toThrow(
      'sigma must be a finite number greater than 0, got 0',
    );
    expect(() => analyzeBends(steps(volts, {}), { minMiddlePoints: 1 })).toThrow(
      'minMiddlePoints must be an integer at least 2, got 1',
    );
  });
});
