/**
 * The Allan deviation: the standard measure of an oscillator's frequency stability over an averaging time τ.
 *
 * For fractional-frequency averages y_i taken back to back at spacing τ₀, the overlapping Allan variance at
 * τ = m·τ₀ is
 *
 *     σ²_y(τ) = 1 / (2·m²·(N − 2m + 1)) · Σ_{j=0}^{N−2m} ( Σ_{i=j}^{j+m−1} (y_{i+m} − y_i) )²
 *
 * (NIST Special Publication 1065, W. J. Riley, "Handbook of Frequency Stability Analysis", 2008, §5.2.4,
 * eq. 11; IEEE Std 1139-2008, the two-sample variance). With m = 1 it is the plain two-sample variance
 * ½·⟨(y_{i+1} − y_i)²⟩. For white frequency noise σ²_y(τ) = h₀/(2τ), so the deviation falls as τ^−1/2;
 * for flicker frequency noise it is flat, 2·ln2·h₋₁ (IEEE Std 1139-2008, table 1).
 *
 * Spanmeter uses it on cents: a pitch in cents is 1200·log2(f/f_ref), and for the small wander of an
 * oscillator a cent is a fixed fractional frequency (1 cent ≈ 5.78·10⁻⁴), so the Allan deviation of a
 * series in cents is the Allan deviation of y scaled by that constant.
 */

import { smallSampleFactor } from './refine.ts';

/** One point of an Allan deviation. */
export interface AllanPoint {
  /** Averaging factor m (τ = m·τ₀). */
  readonly m: number;
  /** Averaging time, seconds. */
  readonly tauSeconds: number;
  /** Overlapping Allan deviation, in the units of the data. */
  readonly deviation: number;
  /** Number of overlapping second differences that entered it (N − 2m + 1). */
  readonly terms: number;
}

/**
 * Overlapping Allan deviation of back-to-back frequency averages at one averaging factor.
 *
 * @param y - Frequency averages (fractional frequency, or cents for small wander), one per τ₀, at least 2m long.
 * @param m - Averaging factor, integer ≥ 1.
 * @returns The deviation in the units of `y`.
 * @throws RangeError when m is not a positive integer or `y` is shorter than 2m, or holds non-finite values.
 * @example allanDeviation([1, 3, 1, 3], 1) // √(½·⟨(±2)²⟩) = √2
 */
export function allanDeviation(y: ArrayLike<number>, m = 1): number {
  if (!Number.isInteger(m) || m < 1) throw new RangeError(`m must be an integer ≥ 1, got ${m}`);
  const n = y.length;
  if (n < 2 * m) throw new RangeError(`y must hold at least 2m = ${2 * m} values, got ${n}`);
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(y[i])) throw new RangeError(`y[${i}] must be finite, got ${y[i]}`);
  }
  const terms = n - 2 * m + 1;
  // Running inner sum S_j = Σ_{i=j}^{j+m−1} (y_{i+m} − y_i), updated as j advances.
  let inner = 0;
  for (let i = 0; i < m; i++) inner += y[i + m] - y[i];
  let sum = inner * inner;
  for (let j = 1; j < terms; j++) {
    inner += y[j + 2 * m - 1] - y[j + m - 1] - (y[j + m - 1] - y[j - 1]);
    sum += inner * inner;
  }
  return Math.sqrt(sum / (2 * m * m * terms));
}

/**
 * Allan deviations at octave-spaced averaging factors m = 1, 2, 4, … while at least `minTerms` terms remain.
 *
 * @param y - Back-to-back frequency averages.
 * @param tau0Seconds - Spacing of the averages, seconds (> 0).
 * @param minTerms - Fewest overlapping terms a point must rest on (≥ 1). Default 4.
 * @example allanSeries(yCents, 0.1).map((p) => [p.tauSeconds, p.deviation])
 */
export function allanSeries(y: ArrayLike<number>, tau0Seconds: number, minTerms = 4): AllanPoint[] {
  if (!(tau0Seconds > 0) || !Number.isFinite(tau0Seconds)) {
    throw new RangeError(`tau0Seconds must be a positive finite number, got ${tau0Seconds}`);
  }
  if (!Number.isInteger(minTerms) || minTerms < 1) {
    throw new RangeError(`minTerms must be an integer ≥ 1, got ${minTerms}`);
  }
  const out: AllanPoint[] = [];
  for (let m = 1; y.length - 2 * m + 1 >= minTerms; m *= 2) {
    out.push({
      m,
      tauSeconds: m * tau0Seconds,
      deviation: allanDeviation(y, m),
      terms: y.length - 2 * m + 1,
    });
  }
  return out;
}

/**
 * The oscillator's repeatability over a window from the scatter of its sub-window estimates: the
 * two-sample (Allan) variance of J back-to-back sub-window results, less the part their own estimator
 * errors explain, is the wander at τ = T/J. Frequency noise of an analog oscillator is mostly flicker
 * (flat Allan deviation), for which the wander of a T-long mean is no smaller than at T/J, so the excess
 * deviation at T/J is taken as the standard uncertainty of the whole window's mean, widened by
 * t₀.₉₇₅(ν)/1.96 for the ν = J − 1 differences it rests on (GUM G.3). For white frequency noise this
 * overstates by up to √J, the safe side.
 *
 * @param cents - Sub-window results, cents against any common reference, in time order (J ≥ 2).
 * @param sigmaCents - Their estimator standard errors, cents.
 * @returns `repeatabilityCents` (≥ 0) and `dof` = J − 1.
 * @example subWindowRepeatability([0, 0.02, -0.01, 0.03], [0.001, 0.001, 0.001, 0.001]).repeatabilityCents // ≈ 0.03
 */
export function subWindowRepeatability(
  cents: ArrayLike<number>,
  sigmaCents: ArrayLike<number>,
): { repeatabilityCents: number; dof: number } {
  const J = cents.length;
  if (J < 2 || sigmaCents.length !== J) {
    throw new RangeError(
      `cents must hold at least 2 values and sigmaCents as many, got ${J} and ${sigmaCents.length}`,
    );
  }
  const avar = allanDeviation(cents, 1) ** 2;
  let meanVar = 0;
  for (let i = 0; i < J; i++) meanVar += sigmaCents[i] * sigmaCents[i];
  meanVar /= J;
  const excess = Math.max(0, avar - meanVar);
  const dof = J - 1;
  return { repeatabilityCents: Math.sqrt(excess) * smallSampleFactor(dof), dof };
}
