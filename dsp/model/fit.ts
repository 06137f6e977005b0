/**
 * The tracking fit: weighted least squares of log2(f) against control voltage, and the bend analysis
 * that separates the scale error of the trusted middle of the range from high-frequency droop and a
 * low-end bend.
 *
 * A 1 V/oct oscillator obeys `log2(f) = log2(f₀V) + s·V` with s = 1 octave per volt when the scale is
 * right. The straight-line fit with weights 1/σ² is the textbook weighted least-squares line
 * (Bevington & Robinson, "Data Reduction and Error Analysis for the Physical Sciences", ch. 6).
 */
import { compareHighFrequencyModels, type HfComparison } from '../converter/index.ts';
import type { Cents, Hertz, Volts } from '../math/index.ts';

/** Cents per octave (Ellis, 1885). */
const CENTS_PER_OCTAVE = 1200;

/**
 * Smallest standard uncertainty used as a weight, cents. A reading that claims less (including 0, as
 * from a perfect synthetic tone) is weighted as if it had 0.001 cent, so that 1/σ² stays finite and one
 * reading cannot outweigh all others by an arbitrary factor.
 */
export const MIN_UNCERTAINTY_CENTS: Cents = 0.001;

/** One measured step: the control voltage applied and the pitch read. */
export interface TrackingPoint {
  /** Control voltage at the oscillator's input, V, finite. */
  readonly volts: Volts;
  /** Measured frequency, Hz, > 0. */
  readonly hz: Hertz;
  /** Standard uncertainty of the reading, cents, ≥ 0 (raised to {@link MIN_UNCERTAINTY_CENTS}). */
  readonly uncertaintyCents: Cents;
}

/** Options for {@link fitTracking}. */
export interface TrackingFitOptions {
  /** Lowest voltage to include, V (inclusive). Default: no limit. */
  readonly fromVolts?: Volts;
  /** Highest voltage to include, V (inclusive). Default: no limit. */
  readonly toVolts?: Volts;
}

/** A successful tracking fit. */
export interface TrackingFitOk {
  readonly kind: 'ok';
  /** Fitted slope s, octaves per volt (1 for a perfect 1 V/oct scale). */
  readonly octavesPerVolt: number;
  /** Standard error of s, octaves per volt, scaled up by the Birge ratio when it exceeds 1. */
  readonly octavesPerVoltStdErr: number;
  /** `1200·(s − 1)`: cents gained per volt beyond one octave; negative = octaves narrow. */
  readonly scaleErrorCentsPerOctave: Cents;
  /** Standard error of the scale error, cents per octave (= 1200·octavesPerVoltStdErr). */
  readonly scaleErrorStdErrCents: Cents;
  /** Frequency the line gives at 0 V, Hz (an extrapolation when 0 V lies outside the range). */
  readonly hzAt0V: Hertz;
  /** Standard error of `hzAt0V`, cents (Birge-scaled). */
  readonly hzAt0VStdErrCents: Cents;
  /** Covariance of (intercept, slope) in octaves², octaves²/V and octaves²/V², Birge-scaled. */
  readonly covariance: { readonly intercept: number; readonly cross: number; readonly slope: number };
  /** Indices into the input of the points used, in input order. */
  readonly usedIndices: readonly number[];
  /** Measured minus fitted pitch for each used point, cents, in the order of `usedIndices`. */
  readonly residualsCents: readonly Cents[];
  /** Largest |residual|, cents. */
  readonly maxAbsResidualCents: Cents;
  /** Σ (residual/σ)². */
  readonly chiSquared: number;
  /** Degrees of freedom, points − 2. */
  readonly dof: number;
  /** `chiSquared/dof`, or null when `dof` is 0 (two points fit exactly). */
  readonly chiSquaredPerDof: number | null;
  /** `max(1, √(χ²/dof))`, the factor applied to the standard errors (1 when dof is 0). */
  readonly birgeRatio: number;
  /** Lowest and highest voltage among the points used, V. */
  readonly fromVolts: Volts;
  readonly toVolts: Volts;
}

/**
 * No fit: `too-few-points` when fewer than two points fall in the range, `no-voltage-span` when they
 * all share one voltage.
 */
export interface TrackingFitNone {
  readonly kind: 'none';
  readonly reason: 'too-few-points' | 'no-voltage-span';
}

/** Outcome of {@link fitTracking}. */
export type TrackingFit = TrackingFitOk | TrackingFitNone;

function validatePoints(points: readonly TrackingPoint[]): void {
  if (!Array.isArray(points)) throw new RangeError(`points must be an array, got ${String(points)}`);
  points.forEach((p, i) => {
    if (!Number.isFinite(p.volts))
      throw new RangeError(`points[${i}].volts must be a finite number, got ${p.volts}`);
    if (!Number.isFinite(p.hz) || p.hz <= 0) {
      throw new RangeError(`points[${i}].hz must be a finite number greater than 0, got ${p.hz}`);
    }
    if (!Number.isFinite(p.uncertaintyCents) || p.uncertaintyCents < 0) {
      throw new RangeError(
        `points[${i}].uncertaintyCents must be a finite number at least 0, got ${p.uncertaintyCents}`,
      );
    }
  });
}

/** Weighted straight-line fit on already validated points (indices into `points`). */
function fitIndices(points: readonly TrackingPoint[], indices: readonly number[]): TrackingFit {
  const n = indices.length;
  if (n < 2) return { kind: 'none', reason: 'too-few-points' };
  const x = indices.map((i) => points[i].volts);
  const y = indices.map((i) => Math.log2(points[i].hz));
  const w = indices.map((i) => {
    const s = Math.max(points[i].uncertaintyCents, MIN_UNCERTAINTY_CENTS) / CENTS_PER_OCTAVE;
    return 1 / (s * s);
  });
  let sw = 0;
  let swx = 0;
  let swy = 0;
  for (let k = 0; k < n; k++) {
    sw += w[k];
    swx += w[k] * x[k];
    swy += w[k] * y[k];
  }
  const xm = swx / sw;
  const ym = swy / sw;
  let sxx = 0;
  let sxy = 0;
  for (let k = 0; k < n; k++) {
    const dx = x[k] - xm;
    sxx += w[k] * dx * dx;
    sxy += w[k] * dx * (y[k] - ym);
  }
  if (!(sxx > 0) || Math.max(...x) === Math.min(...x)) return { kind: 'none', reason: 'no-voltage-span' };
  // Centred weighted least squares (Bevington & Robinson ch. 6): s = Sxy/Sxx, a = ȳ − s·x̄,
  // var(s) = 1/Sxx, var(a) = 1/Σw + x̄²/Sxx, cov(a, s) = −x̄/Sxx.
  const slope = sxy / sxx;
  const intercept = ym - slope * xm;
  const residualsCents: number[] = [];
  let chi = 0;
  let maxAbs = 0;
  for (let k = 0; k < n; k++) {
    const r = y[k] - (intercept + slope * x[k]);
    chi += w[k] * r * r;
    residualsCents.push(r * CENTS_PER_OCTAVE);
    maxAbs = Math.max(maxAbs, Math.abs(r * CENTS_PER_OCTAVE));
  }
  const dof = n - 2;
  const birgeRatio = dof > 0 ? Math.max(1, Math.sqrt(chi / dof)) : 1;
  const b2 = birgeRatio * birgeRatio;
  const varSlope = b2 / sxx;
  const varIntercept = b2 * (1 / sw + (xm * xm) / sxx);
  const cross = (-b2 * xm) / sxx;
  return {
    kind: 'ok',
    octavesPerVolt: slope,
    octavesPerVoltStdErr: Math.sqrt(varSlope),
    scaleErrorCentsPerOctave: CENTS_PER_OCTAVE * (slope - 1),
    scaleErrorStdErrCents: CENTS_PER_OCTAVE * Math.sqrt(varSlope),
    hzAt0V: Math.pow(2, intercept),
    hzAt0VStdErrCents: CENTS_PER_OCTAVE * Math.sqrt(varIntercept),
    covariance: { intercept: varIntercept, cross, slope: varSlope },
    usedIndices: [...indices].sort((a, b) => a - b),
    residualsCents: [...indices]
      .map((idx, k) => [idx, residualsCents[k]] as const)
      .sort((a, b) => a[0] - b[0])
      .map(([, r]) => r),
    maxAbsResidualCents: maxAbs,
    chiSquared: chi,
    dof,
    chiSquaredPerDof: dof > 0 ? chi / dof : null,
    birgeRatio,
    fromVolts: Math.min(...x),
    toVolts: Math.max(...x),
  };
}

/**
 * Weighted least-squares line through (V, log2 f) with weights `1/σ²`, σ = `uncertaintyCents/1200`
 * octaves floored at {@link MIN_UNCERTAINTY_CENTS} (Bevington & Robinson, ch. 6). Standard errors are
 * from the stated uncertainties, multiplied by the Birge ratio √(χ²/dof) when the scatter is larger
 * than the uncertainties claim (Particle Data Group practice), never reduced.
 *
 * @param points - Measured steps, any order; volts finite, hz > 0, uncertaintyCents ≥ 0.
 * @param opts - Optional inclusive voltage range; `fromVolts` must not exceed `toVolts`.
 * @returns The fit, or `{ kind: 'none', reason }` when fewer than two points or no voltage span remain.
 * @throws RangeError naming the first invalid field, or when `fromVolts > toVolts`.
 * @example
 * fitTracking([{ volts: 1, hz: 65.406, uncertaintyCents: 0.01 }, { volts: 3, hz: 261.626, uncertaintyCents: 0.01 }])
 * // { kind: 'ok', octavesPerVolt: 1.0000…, scaleErrorCentsPerOctave: 0.00…, hzAt0V: 32.703…, … }
 */
export function fitTracking(points: readonly TrackingPoint[], opts: TrackingFitOptions = {}): TrackingFit {
  validatePoints(points);
  const from = opts.fromVolts ?? -Infinity;
  const to = opts.toVolts ?? Infinity;
  if (Number.isNaN(from)) throw new RangeError(`fromVolts must be a number, got ${from}`);
  if (Number.isNaN(to)) throw new RangeError(`toVolts must be a number, got ${to}`);
  if (from > to) throw new RangeError(`fromVolts (${from}) must not exceed toVolts (${to})`);
  const idx: number[] = [];
  points.forEach((p, i) => {
    if (p.volts >= from && p.volts <= to) idx.push(i);
  });
  return fitIndices(points, idx);
}

/**
 * Pitch the fitted line gives at a voltage: `hzAt0V·2^(s·V)`.
 *
 * @param fit - A successful fit.
 * @param volts - Control voltage, V, finite.
 * @returns Hz.
 * @example predictedHz(fit, 0) // fit.hzAt0V
 */
export function predictedHz(fit: TrackingFitOk, volts: Volts): Hertz {
  if (!Number.isFinite(volts)) throw new RangeError(`volts must be a finite number, got ${volts}`);
  return fit.hzAt0V * Math.pow(2, fit.octavesPerVolt * volts);
}

/**
 * Standard uncertainty of the fitted line's pitch at a voltage, cents:
 * `1200·√(var a + 2V·cov(a,s) + V²·var s)` (propagation of the fit covariance, JCGM 100:2008 §5.2).
 *
 * @param fit - A successful fit.
 * @param volts - Control voltage, V, finite.
 * @example predictionUncertaintyCents(fit, 2) // 0.01/√3 = 0.005 77… (× birgeRatio) for three 0.01-cent readings at 1, 2, 3 V
 */
export function predictionUncertaintyCents(fit: TrackingFitOk, volts: Volts): Cents {
  if (!Number.isFinite(volts)) throw new RangeError(`volts must be a finite number, got ${volts}`);
  const { intercept, cross, slope } = fit.covariance;
  return CENTS_PER_OCTAVE * Math.sqrt(Math.max(0, intercept + 2 * volts * cross + volts * volts * slope));
}

// ---------------------------------------------------------------------------------------------------
// Bends
// ---------------------------------------------------------------------------------------------------

/** Options for {@link analyzeBends}. */
export interface BendOptions {
  /** An end step is excluded when its deviation exceeds this many combined standard uncertainties. Default 3. */
  readonly sigma?: number;
  /** …and is at least this large, cents, so that sub-audible curvature is not called a bend. Default 0.5. */
  readonly minBendCents?: Cents;
  /** Fewest steps kept in the trusted middle, ≥ 2. Default 3. */
  readonly minMiddlePoints?: number;
}

/** One end step's deviation from the middle line. */
export interface EndStepDeviation {
  /** Index into the input points. */
  readonly index: number;
  readonly volts: Volts;
  readonly hz: Hertz;
  /** Measured minus middle-line pitch, cents (negative = flat). */
  readonly cents: Cents;
  /** Combined standard uncertainty of `cents`: reading and line prediction, Birge-scaled. */
  readonly uncertaintyCents: Cents;
}

/** The end of the range is straight (within the criteria). */
export interface EndStraight {
  readonly kind: 'straight';
}

/** The end of the range bends away from the middle line. */
export interface EndBent {
  readonly kind: 'bent';
  /** `flat` for the usual high-frequency droop; `sharp` when over-compensated. */
  readonly direction: 'flat' | 'sharp';
  /** Deviation of the outermost step, cents. */
  readonly centsAtEnd: Cents;
  /** Its combined standard uncertainty, cents. */
  readonly uncertaintyCents: Cents;
  /** Every excluded step at this end, outermost first. */
  readonly steps: readonly EndStepDeviation[];
}

/** Outcome at one end of the range. */
export type EndBehaviour = EndStraight | EndBent;

/** Result of {@link analyzeBends}. */
export interface BendAnalysisOk {
  readonly kind: 'ok';
  /** Fit of the trusted middle of the range; its `usedIndices` index the input. */
  readonly middle: TrackingFitOk;
  /** Scale error of the middle fit, cents per octave (same as `middle.scaleErrorCentsPerOctave`). */
  readonly scaleErrorCentsPerOctave: Cents;
  /** Top of the range: high-frequency droop (reset time or bulk resistance) or over-compensation. */
  readonly highEnd: EndBehaviour;
  /** Bottom of the range. */
  readonly lowEnd: EndBehaviour;
  /** Every point's deviation from the middle line, cents, in input order. */
  readonly deviationsCents: readonly Cents[];
  /**
   * Reset time versus bulk resistance, fitted jointly with a straight line to every step above the
   * low-end bend (see {@link compareHighFrequencyModels}).
   */
  readonly hf: HfComparison;
  /** Lowest and highest measured step (by voltage), with their input index. */
  readonly lowest: { readonly index: number; readonly volts: Volts; readonly hz: Hertz };
  readonly highest: { readonly index: number; readonly volts: Volts; readonly hz: Hertz };
}

/** Outcome of {@link analyzeBends}. */
export type BendAnalysis = BendAnalysisOk | TrackingFitNone;

/**
 * Finds the trusted middle of the range and the bends at either end.
 *
 * Steps are sorted by voltage. Repeatedly, for each end, the line is fitted without the outermost
 * remaining step and that step's deviation from it is compared with its combined uncertainty
 * (reading σ and the line's prediction uncertainty, both times the fit's Birge ratio). The end step
 * with the larger normalised deviation is excluded when it exceeds `sigma` standard uncertainties
 * and `minBendCents`. When neither qualifies alone, both ends are tested against the fit without
 * either (a bent step at each end can mask the other). This stops when no end qualifies or
 * `minMiddlePoints` remain. The scale
 * error is then reported from the middle fit, separately from droop at the top step and the bend at
 * the bottom, the way a technician trims scale in the low-middle range before touching HF
 * (docs/facts.md, "How technicians calibrate", common practice).
 *
 * @param points - Measured steps (as for {@link fitTracking}).
 * @param opts - Exclusion criteria.
 * @returns The analysis, or `{ kind: 'none', reason }` when no middle fit is possible.
 * @throws RangeError for invalid points or options.
 * @example
 * // Steps at 32.703·2^V Hz for V = 0…7, each flattened by a 4.55 µs reset time, σ = 0.01 cent:
 * analyzeBends(steps)
 * // { kind: 'ok', middle: { usedIndices: [0, 1, 2], … }, scaleErrorCentsPerOctave: −0.386…,
 * //   highEnd: { kind: 'bent', direction: 'flat', centsAtEnd: −29.74…, … }, lowEnd: { kind: 'straight' },
 * //   hf: { kind: 'ok', better: 'reset-time', … }, … }
 */
export function analyzeBends(points: readonly TrackingPoint[], opts: BendOptions = {}): BendAnalysis {
  validatePoints(points);
  const sigma = opts.sigma ?? 3;
  const minBend = opts.minBendCents ?? 0.5;
  const minMiddle = opts.minMiddlePoints ?? 3;
  if (!Number.isFinite(sigma) || sigma <= 0)
    throw new RangeError(`sigma must be a finite number greater than 0, got ${sigma}`);
  if (!Number.isFinite(minBend) || minBend < 0) {
    throw new RangeError(`minBendCents must be a finite number at least 0, got ${minBend}`);
  }
  if (!Number.isInteger(minMiddle) || minMiddle < 2) {
    throw new RangeError(`minMiddlePoints must be an integer at least 2, got ${minMiddle}`);
  }
  const order = points.map((_, i) => i).sort((a, b) => points[a].volts - points[b].volts || a - b);
  const first = fitIndices(points, order);
  if (first.kind === 'none') return first;

  const deviationFrom = (fit: TrackingFitOk, i: number): { cents: number; u: number } => {
    const p = points[i];
    const cents = CENTS_PER_OCTAVE * Math.log2(p.hz / predictedHz(fit, p.volts));
    const own = Math.max(p.uncertaintyCents, MIN_UNCERTAINTY_CENTS) * fit.birgeRatio;
    const line = predictionUncertaintyCents(fit, p.volts);
    return { cents, u: Math.sqrt(own * own + line * line) };
  };

  let lo = 0;
  let hi = order.length - 1;
  for (;;) {
    if (hi - lo + 1 <= minMiddle) break;
    let best: 'lo' | 'hi' | null = null;
    let bestScore = 0;
    for (const end of ['hi', 'lo'] as const) {
      const rest = end === 'hi' ? order.slice(lo, hi) : order.slice(lo + 1, hi + 1);
      const f = fitIndices(points, rest);
      if (f.kind !== 'ok') continue;
      const d = deviationFrom(f, order[end === 'hi' ? hi : lo]);
      const score = Math.abs(d.cents) / d.u;
      if (score > sigma && Math.abs(d.cents) >= minBend && score > bestScore) {
        best = end;
        bestScore = score;
      }
    }
    if (best === null && hi - lo + 1 - 2 >= minMiddle) {
      // A bent step at each end can hide the other by inflating the Birge ratio: try both at once.
      const f = fitIndices(points, order.slice(lo + 1, hi));
      if (f.kind === 'ok') {
        const ok = [order[lo], order[hi]].every((i) => {
          const d = deviationFrom(f, i);
          return Math.abs(d.cents) / d.u > sigma && Math.abs(d.cents) >= minBend;
        });
        if (ok) {
          lo += 1;
          hi -= 1;
          continue;
        }
      }
    }
    if (best === null) break;
    if (best === 'hi') hi -= 1;
    else lo += 1;
  }
  const middle = fitIndices(points, order.slice(lo, hi + 1));
  if (middle.kind !== 'ok') return middle;

  const endOf = (indices: number[]): EndBehaviour => {
    if (indices.length === 0) return { kind: 'straight' };
    const steps = indices.map((i) => {
      const d = deviationFrom(middle, i);
      return { index: i, volts: points[i].volts, hz: points[i].hz, cents: d.cents, uncertaintyCents: d.u };
    });
    const outer = steps[0];
    return {
      kind: 'bent',
      direction: outer.cents < 0 ? 'flat' : 'sharp',
      centsAtEnd: outer.cents,
      uncertaintyCents: outer.uncertaintyCents,
      steps,
    };
  };
  const highIdx = order.slice(hi + 1).reverse();
  const lowIdx = order.slice(0, lo);
  const deviationsCents = points.map((_, i) => deviationFrom(middle, i).cents);
  const above = order.slice(lo);
  const hf = compareHighFrequencyModels({
    hz: above.map((i) => points[i].hz),
    centsFromIdeal: above.map((i) => CENTS_PER_OCTAVE * (Math.log2(points[i].hz) - points[i].volts)),
    uncertaintyCents: above.map((i) => points[i].uncertaintyCents),
    volts: above.map((i) => points[i].volts),
  });
  const lowP = points[order[0]];
  const highP = points[order[order.length - 1]];
  return {
    kind: 'ok',
    middle,
    scaleErrorCentsPerOctave: middle.scaleErrorCentsPerOctave,
    highEnd: endOf(highIdx),
    lowEnd: endOf(lowIdx),
    deviationsCents,
    hf,
    lowest: { index: order[0], volts: lowP.volts, hz: lowP.hz },
    highest: { index: order[order.length - 1], volts: highP.volts, hz: highP.hz },
  };
}
