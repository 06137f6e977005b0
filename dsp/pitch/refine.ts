/**
 * High-precision refinement of a fundamental frequency by a harmonic phase-slope fit.
 *
 * Method. The window is cut into M consecutive, non-overlapping segments, each as close as the sample grid
 * allows to C whole periods of the coarse fundamental f̂. For every harmonic k the segment's Hann-windowed
 * Fourier coefficient at k·f̂ is taken (complex demodulation, phase referred to the window start). For a
 * harmonic at k·(f̂ + δ) the phase of segment m is exactly `a_k + 2π·k·δ·t_m`, where t_m is the segment's
 * centre, because a symmetric window has a real transform. δ follows from a weighted least-squares line
 * through the unwrapped phases of all harmonics jointly (one slope, one intercept per harmonic), with weights
 * |c|², the inverse of each phase's noise variance at high SNR.
 *
 * Sources: linear regression on the phase of a sinusoid attains the Cramér–Rao bound at high SNR
 * (S. Tretter, "Estimating the frequency of a noisy sinusoid by linear regression", IEEE Trans. Inf.
 * Theory 31(6), 1985; S. Kay, "A fast and accurate single frequency estimator", IEEE Trans. ASSP 37(12), 1989);
 * for a harmonic signal the per-harmonic information adds with weight k² (the bound of D. Rife and
 * R. Boorstyn, IEEE Trans. Inf. Theory 20(5), 1974, extended to harmonic sums). Short-time phase of a
 * windowed DFT as a frequency measurement: J. L. Flanagan and R. M. Golden, "Phase vocoder", Bell System
 * Technical Journal 45, 1966.
 *
 * Why period-synchronous segments: the other harmonics and the negative-frequency image lie a whole number
 * of cycles per segment away, so their leakage into a coefficient has the same phase in every segment and
 * falls into the intercept instead of the slope. Mains hum is not synchronous: where a hum line falls close
 * to a harmonic, the hum's own coefficient is measured and its known leakage subtracted (a 2×2 solve per
 * segment); a harmonic too close to a hum line to separate is left out.
 *
 * The uncertainty is the slope's standard error from the fit's own residuals (weighted least squares with
 * unknown scale), widened by the ratio of Student's t to the normal quantile for the residual degrees of
 * freedom so that ±2 standard errors keep their coverage with few segments. Outlying segments (a DC step,
 * a click) are down-weighted by three re-weighting passes with Tukey's biweight on a MAD scale (four weighted
 * fits in all; Mosteller & Tukey, "Data Analysis and Regression", 1977; P. J. Huber, "Robust Statistics", 1981).
 *
 * The class allocates its buffers once, for the largest window, harmonic count and segment count it is
 * built for; `refine` then allocates nothing.
 */

import type { Hertz } from '../math/index.ts';

/** Mains hum lines that are cancelled or avoided: 50 and 60 Hz and their 2nd and 3rd harmonics. */
export const HUM_LINES_HZ: readonly Hertz[] = [50, 100, 150, 60, 120, 180];

/** Result of one refinement, written into a reusable object. */
export interface RefineResult {
  /** True when the fit succeeded. */
  ok: boolean;
  /** Refined fundamental, Hz. */
  hz: number;
  /** Standard error of `hz`, Hz (already widened for the degrees of freedom). */
  stdErrHz: number;
  /** Harmonics that entered the fit. */
  harmonicsUsed: number;
  /** Segments per harmonic. */
  segments: number;
  /** Power of the fitted harmonics as a fraction of the window's power (0…1, about 1 for a clean tone). */
  explainedFraction: number;
  /** Residual degrees of freedom. */
  dof: number;
  /** Breaks inside the fitted span (reported through `setBreaks` or found in the data). */
  breaks: number;
  /** How many of `breaks` were found in the data. */
  foundBreaks: number;
  /**
   * Information on the frequency (k²·power) of the harmonics left out as too close to a hum line to
   * separate, over that of the harmonics fitted; 0 when none was left out. Well above 1, the fit rests
   * on harmonics far weaker than the ones left out.
   */
  humLeftOutShare: number;
  /**
   * When the fit failed only for want of degrees of freedom (too few segments kept after breaks and robust
   * re-weighting), the frequency it reached, Hz: a better centre to fit again from. 0 otherwise.
   */
  provisionalHz: number;
}

/** Most break positions a window can be given. */
export const MAX_BREAKS = 8;
/** Most breaks looked for in the data per window. */
const MAX_FOUND_BREAKS = 4;
/** Smallest time shift, seconds, taken for a break: a smaller one moves a 1 s reading by under 1e-4 cent. */
const MIN_SHIFT_SECONDS = 1e-7;
/** Factor on the standard error of a reading that spans a break found in the data (see `refine`). */
const FOUND_BREAK_WIDENING = 1.5;
/** Most unbroken stretches per window. */
const MAX_STRETCHES = MAX_BREAKS + 2 * MAX_FOUND_BREAKS + 1;

/**
 * Zero, as the initial value of a reused object's field that later holds fractions (a frequency, a variance).
 * It equals 0 in every comparison and product, but it is not a small integer, so V8 stores the field as a
 * double from the start. A field that first held the integer 0 changes its object's hidden class when its
 * first fraction arrives; optimised code then being compiled for the hot loops that use the object is
 * thrown away (measured on Node 20: the refinement's 90 ms compilation, redone once per process). No effect
 * on any result. Never divide by a field that may still hold it (1 / −0 is −Infinity).
 */
export const DOUBLE_ZERO = -0;

/** Creates an empty {@link RefineResult}. */
export function emptyRefineResult(): RefineResult {
  return {
    ok: false,
    hz: DOUBLE_ZERO,
    stdErrHz: DOUBLE_ZERO,
    harmonicsUsed: 0,
    segments: 0,
    explainedFraction: DOUBLE_ZERO,
    dof: DOUBLE_ZERO,
    breaks: 0,
    foundBreaks: 0,
    humLeftOutShare: DOUBLE_ZERO,
    provisionalHz: DOUBLE_ZERO,
  };
}

// Two-sided 97.5 % quantiles of Student's t for 1…30 degrees of freedom (any statistics handbook,
// e.g. Abramowitz & Stegun, Handbook of Mathematical Functions, table 26.10).
const T975 = [
  12.706, 4.303, 3.182, 2.776, 2.571, 2.447, 2.365, 2.306, 2.262, 2.228, 2.201, 2.179, 2.16, 2.145, 2.131,
  2.12, 2.11, 2.101, 2.093, 2.086, 2.08, 2.074, 2.069, 2.064, 2.06, 2.056, 2.052, 2.048, 2.045, 2.042,
];

/** t(0.975, dof)/1.96: the factor that widens a residual-based standard error for few degrees of freedom. */
export function smallSampleFactor(dof: number): number {
  if (dof < 1) return 6.5;
  if (dof <= 30) return T975[Math.floor(dof) - 1] / 1.959964;
  // Cornish–Fisher expansion of t about the normal quantile (A&S 26.7.5), first two terms.
  const z = 1.959964;
  return (z + (z * z * z + z) / (4 * dof)) / z;
}

const TWO_PI = 2 * Math.PI;

/** Median of the first `n` entries of `a` by quickselect (Hoare); reorders them, allocates nothing. */
export function selectMedian(a: Float64Array, n: number): number {
  return selectQuantile(a, n, n >> 1);
}

/**
 * The `k`-th smallest (0-based) of the first `n` entries of `a` by quickselect (Hoare); reorders them,
 * allocates nothing.
 */
export function selectQuantile(a: Float64Array, n: number, k: number): number {
  if (n <= 0) return 0;
  let lo = 0;
  let hi = n - 1;
  while (lo < hi) {
    const pivot = a[(lo + hi) >> 1];
    let i = lo;
    let j = hi;
    while (i <= j) {
      while (a[i] < pivot) i++;
      while (a[j] > pivot) j--;
      if (i <= j) {
        const t = a[i];
        a[i] = a[j];
        a[j] = t;
        i++;
        j--;
      }
    }
    if (k <= j) hi = j;
    else if (k >= i) lo = i;
    else break;
  }
  return a[k];
}

/** Σ_{i<L} cos(x·(i − (L−1)/2)) = sin(Lx/2)/sin(x/2), with its limit L where sin(x/2) vanishes. */
function dirichlet(x: number, L: number): number {
  const sh = Math.sin(x / 2);
  if (Math.abs(sh) < 1e-12) return L * Math.cos((L - 1) * Math.PI * Math.round(x / TWO_PI));
  return Math.sin((L * x) / 2) / sh;
}

function wrapPi(a: number): number {
  return a - TWO_PI * Math.round(a / TWO_PI);
}

/**
 * Writes the length-`L` Hann window sin²(π(i + ½)/L) into `win[0…L)` and returns the sum of its values
 * (F. J. Harris, Proc. IEEE 66(1), 1978). A small function of its own, so that it is optimised early.
 */
function hannSegment(win: Float64Array, L: number): number {
  let wsum = 0;
  for (let i = 0; i < L; i++) {
    const s = Math.sin((Math.PI * (i + 0.5)) / L);
    win[i] = s * s;
    wsum += s * s;
  }
  return wsum;
}

/** `out[i] = x[s0 + i]·win[i]` for i < L: one segment, windowed (a small function, so it is optimised early). */
function windowInto(x: Float64Array, s0: number, win: Float64Array, L: number, out: Float64Array): void {
  for (let i = 0; i < L; i++) out[i] = x[s0 + i] * win[i];
}

/**
 * Runs the Goertzel recurrence s[n] = x[n] + 2cos(ω)·s[n−1] − s[n−2] over `xw[0…L)` for `count` (1…4)
 * frequencies `w[q]` (radians per sample) side by side, and leaves each one's last two values in
 * `out[2q]` (s[L−1]) and `out[2q+1]` (s[L−2]). Each recurrence does exactly the arithmetic of a lone one,
 * in the same order, so the values are the same; running four at once only keeps the processor busy while
 * each waits for its previous step (G. Goertzel, Amer. Math. Monthly 65(1), 1958).
 */
function goertzel4(xw: Float64Array, L: number, w: Float64Array, count: number, out: Float64Array): void {
  const c0 = 2 * Math.cos(w[0]);
  const c1 = count > 1 ? 2 * Math.cos(w[1]) : 0;
  const c2 = count > 2 ? 2 * Math.cos(w[2]) : 0;
  const c3 = count > 3 ? 2 * Math.cos(w[3]) : 0;
  let a1 = 0;
  let a2 = 0;
  let b1 = 0;
  let b2 = 0;
  let d1 = 0;
  let d2 = 0;
  let e1 = 0;
  let e2 = 0;
  if (count === 4) {
    for (let i = 0; i < L; i++) {
      const v = xw[i];
      const a = v + c0 * a1 - a2;
      const b = v + c1 * b1 - b2;
      const d = v + c2 * d1 - d2;
      const e = v + c3 * e1 - e2;
      a2 = a1;
      a1 = a;
      b2 = b1;
      b1 = b;
      d2 = d1;
      d1 = d;
      e2 = e1;
      e1 = e;
    }
  } else if (count === 3) {
    for (let i = 0; i < L; i++) {
      const v = xw[i];
      const a = v + c0 * a1 - a2;
      const b = v + c1 * b1 - b2;
      const d = v + c2 * d1 - d2;
      a2 = a1;
      a1 = a;
      b2 = b1;
      b1 = b;
      d2 = d1;
      d1 = d;
    }
  } else if (count === 2) {
    for (let i = 0; i < L; i++) {
      const v = xw[i];
      const a = v + c0 * a1 - a2;
      const b = v + c1 * b1 - b2;
      a2 = a1;
      a1 = a;
      b2 = b1;
      b1 = b;
    }
  } else {
    for (let i = 0; i < L; i++) {
      const a = xw[i] + c0 * a1 - a2;
      a2 = a1;
      a1 = a;
    }
  }
  out[0] = a1;
  out[1] = a2;
  out[2] = b1;
  out[3] = b2;
  out[4] = d1;
  out[5] = d2;
  out[6] = e1;
  out[7] = e2;
}

/** Harmonic phase-slope refiner with preallocated buffers. */
export class HarmonicRefiner {
  readonly maxSamples: number;
  readonly maxHarmonics: number;
  readonly maxSegments: number;
  private readonly win: Float64Array;
  private readonly xw: Float64Array;
  // Per harmonic slot × segment: complex coefficient and weights.
  private readonly re: Float64Array;
  private readonly im: Float64Array;
  private readonly phase: Float64Array;
  private readonly w: Float64Array;
  private readonly wr: Float64Array;
  private readonly t: Float64Array;
  private readonly hk: Int32Array;
  private readonly active: Uint8Array;
  // Hum coefficients per hum line × segment.
  private readonly humRe: Float64Array;
  private readonly humIm: Float64Array;
  private readonly humNeeded: Uint8Array;
  private readonly humFor: Int32Array;
  private readonly humG: Float64Array;
  private readonly scratch: Float64Array;
  private readonly phase0: Float64Array;
  private readonly seg: Int32Array;
  private readonly cut: Uint8Array;
  private readonly breakPos = new Float64Array(MAX_BREAKS);
  private knownBreaks = 0;

  /**
   * @param maxSamples - Longest window to refine, samples.
   * @param maxHarmonics - Most harmonics to fit. Default 64.
   * @param maxSegments - Most segments per window. Default 48.
   */
  constructor(maxSamples: number, maxHarmonics = 64, maxSegments = 48) {
    if (!Number.isInteger(maxSamples) || maxSamples < 16) {
      throw new RangeError(`maxSamples must be an integer ≥ 16, got ${maxSamples}`);
    }
    this.maxSamples = maxSamples;
    this.maxHarmonics = maxHarmonics;
    this.maxSegments = maxSegments;
    this.win = new Float64Array(maxSamples);
    this.xw = new Float64Array(maxSamples);
    const cells = maxHarmonics * maxSegments;
    this.re = new Float64Array(cells);
    this.im = new Float64Array(cells);
    this.phase = new Float64Array(cells);
    this.w = new Float64Array(cells);
    this.wr = new Float64Array(cells);
    this.t = new Float64Array(maxSegments);
    this.hk = new Int32Array(maxHarmonics);
    this.active = new Uint8Array(maxHarmonics);
    this.humRe = new Float64Array(HUM_LINES_HZ.length * maxSegments);
    this.humIm = new Float64Array(HUM_LINES_HZ.length * maxSegments);
    this.humNeeded = new Uint8Array(HUM_LINES_HZ.length);
    this.humFor = new Int32Array(maxHarmonics);
    this.humG = new Float64Array(maxHarmonics);
    this.scratch = new Float64Array(cells);
    this.phase0 = new Float64Array(cells);
    this.seg = new Int32Array(maxSegments);
    this.cut = new Uint8Array(maxSegments);
    this.unwrapped = new Float64Array(maxSegments);
    this.stat = new Float64Array(maxSegments);
    this.zs = new Float64Array(maxSegments);
  }

  /**
   * Refines `f0Hz` on the first `n` samples of `x` (conditioned: no DC, no non-finite values).
   *
   * @param x - Conditioned samples.
   * @param n - Window length, samples, ≤ maxSamples.
   * @param fs - Sample rate, Hz.
   * @param f0Hz - Coarse fundamental, Hz; within a few cents of the truth is ideal, within ±1/(4C) of an
   *   octave works (C cycles per segment).
   * @param harmonics - Harmonic numbers to fit (ascending), as chosen by the caller from the spectrum.
   * @param harmonicCount - How many entries of `harmonics` to use.
   * @param totalPower - Mean square of the window, for `explainedFraction`.
   * @param out - Receives the result.
   * @param segmentsTarget - Desired number of segments. Default 16.
   * @param humMask - Bit h set: hum line HUM_LINES_HZ[h] is present and is cancelled or avoided.
   */
  refine(
    x: Float64Array,
    n: number,
    fs: number,
    f0Hz: number,
    harmonics: Int32Array,
    harmonicCount: number,
    totalPower: number,
    out: RefineResult,
    segmentsTarget = 16,
    humMask = 0b111111,
  ): RefineResult {
    out.ok = false;
    out.provisionalHz = DOUBLE_ZERO;
    const K = Math.min(harmonicCount, this.maxHarmonics);
    const periods = (n * f0Hz) / fs;
    if (K < 1 || periods < 2 || n > this.maxSamples) return out;
    // At least two periods per segment once the window allows it: then a slowly varying baseline sits at
    // the Hann window's first zero (two bins) instead of on its main lobe.
    let C = periods >= 8 ? Math.max(2, Math.floor(periods / segmentsTarget)) : 1;
    let L = Math.round((C * fs) / f0Hz);
    let M = Math.floor(n / L);
    while (M > this.maxSegments) {
      C++;
      L = Math.round((C * fs) / f0Hz);
      M = Math.floor(n / L);
    }
    if (M < 3 || L < 4) return out;
    const offset = Math.floor((n - M * L) / 2);
    const win = this.win;
    const invW = 1 / hannSegment(win, L);
    const segSeconds = L / fs;
    for (let m = 0; m < M; m++) this.t[m] = (offset + m * L + (L - 1) / 2) / fs;

    // Which hum lines lie close enough to a harmonic to leak into it.
    this.humNeeded.fill(0);
    for (let j = 0; j < K; j++) {
      const k = harmonics[j];
      this.hk[j] = k;
      this.active[j] = 1;
      this.humFor[j] = -1;
      this.humG[j] = 0;
      const nu = k * f0Hz;
      let bestG = 0;
      let best = -1;
      for (let h = 0; h < HUM_LINES_HZ.length; h++) {
        if (!(humMask & (1 << h))) continue;
        const bins = Math.abs(HUM_LINES_HZ[h] - nu) * segSeconds;
        if (bins > 6) continue;
        const g = this.windowLeak(HUM_LINES_HZ[h] - nu, L, fs) * invW;
        if (Math.abs(g) > Math.abs(bestG)) {
          bestG = g;
          best = h;
        }
      }
      if (best >= 0 && Math.abs(bestG) > 2e-3) {
        this.humG[j] = bestG;
        if (Math.abs(bestG) >= 0.8) {
          if (K > 1) this.active[j] = 0; // too close to separate: leave this harmonic out
        } else {
          this.humFor[j] = best;
          this.humG[j] = bestG;
          this.humNeeded[best] = 1;
        }
      }
    }

    // Never leave every harmonic out: keep the one least troubled by hum, uncorrected if need be.
    let anyActive = false;
    for (let j = 0; j < K; j++) if (this.active[j]) anyActive = true;
    if (!anyActive) {
      let keep = 0;
      for (let j = 1; j < K; j++) if (Math.abs(this.humG[j]) < Math.abs(this.humG[keep])) keep = j;
      this.active[keep] = 1;
    }

    // Segment coefficients.
    const ms = this.maxSegments;
    for (let m = 0; m < M; m++) {
      const s0 = offset + m * L;
      const xw = this.xw;
      windowInto(x, s0, win, L, xw);
      // Harmonics left out of the fit are still measured: their power counts in `explainedFraction`.
      // Four Goertzel recurrences at a time: the same arithmetic, run side by side.
      for (let j = 0; j < K; j += 4) {
        const g = Math.min(4, K - j);
        for (let q = 0; q < g; q++) this.gw[q] = (TWO_PI * (this.hk[j + q] * f0Hz)) / fs;
        goertzel4(xw, L, this.gw, g, this.gs);
        for (let q = 0; q < g; q++) {
          this.finishCoefficient(this.gs[2 * q], this.gs[2 * q + 1], L, s0, this.hk[j + q] * f0Hz, fs);
          this.re[(j + q) * ms + m] = this.pair[0] * invW;
          this.im[(j + q) * ms + m] = this.pair[1] * invW;
        }
      }
      for (let h = 0; h < HUM_LINES_HZ.length; h++) {
        if (!this.humNeeded[h]) continue;
        this.coefficient(xw, L, s0, HUM_LINES_HZ[h], fs);
        this.humRe[h * ms + m] = this.pair[0] * invW;
        this.humIm[h * ms + m] = this.pair[1] * invW;
      }
    }

    // Hum correction, phases and weights.
    let strongest = -1;
    let strongestPow = 0;
    let explained = 0;
    let infoIn = 0;
    let infoOut = 0;
    for (let j = 0; j < K; j++) {
      if (!this.active[j]) {
        let p = 0;
        for (let m = 0; m < M; m++) {
          const idx = j * ms + m;
          p += this.re[idx] * this.re[idx] + this.im[idx] * this.im[idx];
        }
        explained += (2 * p) / M;
        infoOut += this.hk[j] * this.hk[j] * p;
        continue;
      }
      const h = this.humFor[j];
      const g = this.humG[j];
      let pow = 0;
      for (let m = 0; m < M; m++) {
        const idx = j * ms + m;
        let cr = this.re[idx];
        let ci = this.im[idx];
        if (h >= 0) {
          // c' = c − g·r·u with r = exp(j2π(h − ν)t): removes the hum line's leakage (see module comment).
          const ang = TWO_PI * (HUM_LINES_HZ[h] - this.hk[j] * f0Hz) * this.t[m];
          const rr = Math.cos(ang);
          const ri = Math.sin(ang);
          const ur = this.humRe[h * ms + m];
          const ui = this.humIm[h * ms + m];
          cr -= g * (rr * ur - ri * ui);
          ci -= g * (rr * ui + ri * ur);
          const scale = 1 / (1 - g * g);
          cr *= scale;
          ci *= scale;
        }
        const p = cr * cr + ci * ci;
        this.phase[idx] = Math.atan2(ci, cr);
        // Noise of the corrected coefficient grows by (1 + g²)/(1 − g²)²: weight accordingly.
        this.w[idx] = h >= 0 ? (p * (1 - g * g) * (1 - g * g)) / (1 + g * g) : p;
        this.wr[idx] = 1;
        pow += p;
      }
      // Amplitude of harmonic = 2·|coefficient|; its power A²/2 (rotation across segments does not matter).
      explained += (2 * pow) / M;
      infoIn += this.hk[j] * this.hk[j] * pow;
      if (pow > strongestPow) {
        strongestPow = pow;
        strongest = j;
      }
    }
    if (strongest < 0 || strongestPow <= 0) return out;

    const kA = this.hk[strongest];
    this.placeKnownBreaks(M, L, offset);
    this.assignStretches(M);
    this.zeroDropped(K, M);
    // Keep the raw phases: the search for breaks reads them.
    for (let j = 0; j < K; j++) {
      if (!this.active[j]) continue;
      for (let m = 0; m < M; m++) this.phase0[j * ms + m] = this.phase[j * ms + m];
    }
    const found = this.findBreaks(K, M, f0Hz);
    const nStretch = this.assignStretches(M);
    this.zeroDropped(K, M);
    let deltaA = 0;
    let delta = 0;
    let s2 = 0;
    let sxx = 0;
    let dofOut = 0;
    let activeCount = 0;
    // Stage A: slope of the strongest harmonic alone, unwrapped sequentially inside each unbroken stretch,
    // with one intercept per stretch.
    const slopeA = this.stageA(strongest, M, nStretch);
    if (!Number.isFinite(slopeA)) return out;
    deltaA = slopeA / (TWO_PI * kA);

    // Stage B: all harmonics, phases taken relative to stage A's line, then a joint weighted fit with
    // one intercept per harmonic and stretch, and Tukey re-weighting.
    activeCount = 0;
    let usable = 0;
    for (let m = 0; m < M; m++) if (this.seg[m] >= 0) usable++;
    for (let j = 0; j < K; j++) {
      if (!this.active[j]) continue;
      activeCount++;
      const k = this.hk[j];
      // Circular weighted mean of the residual phase per stretch sets the intercept used for wrapping.
      this.stT.fill(0, 0, nStretch);
      this.stY.fill(0, 0, nStretch);
      for (let m = 0; m < M; m++) {
        const r = this.seg[m];
        if (r < 0) continue;
        const idx = j * ms + m;
        const e = this.phase[idx] - TWO_PI * k * deltaA * this.t[m];
        this.stT[r] += this.w[idx] * Math.cos(e);
        this.stY[r] += this.w[idx] * Math.sin(e);
      }
      for (let m = 0; m < M; m++) {
        const idx = j * ms + m;
        const r = this.seg[m];
        if (r < 0) {
          this.phase[idx] = 0;
          this.wr[idx] = 0;
          continue;
        }
        const a0 = Math.atan2(this.stY[r], this.stT[r]);
        this.phase[idx] = wrapPi(this.phase[idx] - TWO_PI * k * deltaA * this.t[m] - a0);
        this.wr[idx] = 1;
      }
    }
    const nPoints = activeCount * usable;
    if (nPoints - activeCount * nStretch - 1 < 1) return out;

    delta = 0;
    s2 = 0;
    sxx = 0;
    dofOut = 0;
    for (let pass = 0; pass < 4; pass++) {
      let sxy = 0;
      sxx = 0;
      for (let j = 0; j < K; j++) {
        if (!this.active[j]) continue;
        const k = this.hk[j];
        this.weightedMeans(j, M, nStretch);
        for (let m = 0; m < M; m++) {
          const r = this.seg[m];
          if (r < 0) continue;
          const idx = j * ms + m;
          const ww = this.w[idx] * this.wr[idx];
          const dt = this.t[m] - this.stT[r];
          sxy += ww * k * dt * (this.phase[idx] - this.stY[r]);
          sxx += ww * k * k * dt * dt;
        }
      }
      if (!(sxx > 0)) return out;
      // Model: phase = a_{k,r} + (2π·k·d)·t  ⇒  d = Σ w k Δt Δy / (2π Σ w k² Δt²).
      delta = sxy / (TWO_PI * sxx);
      // Residuals and scale.
      let ss = 0;
      for (let j = 0; j < K; j++) {
        if (!this.active[j]) continue;
        const k = this.hk[j];
        this.weightedMeans(j, M, nStretch);
        for (let m = 0; m < M; m++) {
          const idx = j * ms + m;
          const r = this.seg[m];
          if (r < 0) {
            this.re[idx] = 0;
            continue;
          }
          const e = this.phase[idx] - this.stY[r] - TWO_PI * k * delta * (this.t[m] - this.stT[r]);
          // The residual is kept in `re` (the coefficients are no longer needed).
          this.re[idx] = e;
          ss += this.w[idx] * this.wr[idx] * e * e;
        }
      }
      // Robust scale from the median absolute standardised residual (1.4826·MAD estimates σ for normal
      // errors), then Tukey's biweight with c = 4.685·σ: a segment hit by a click or a DC step gets weight
      // 0 instead of pulling the slope (Huber, "Robust Statistics"; Mosteller & Tukey, 1977).
      let nu = 0;
      let nEff = 0;
      for (let j = 0; j < K; j++) {
        if (!this.active[j]) continue;
        for (let m = 0; m < M; m++) {
          if (this.seg[m] < 0) continue;
          const idx = j * ms + m;
          this.scratch[nu++] = Math.abs(this.re[idx]) * Math.sqrt(this.w[idx]);
          nEff += this.wr[idx];
        }
      }
      const effDof = nEff - activeCount * nStretch - 1;
      s2 = effDof > 0 ? ss / effDof : 0;
      dofOut = effDof;
      if (pass === 3) break;
      const scale = 1.4826 * selectMedian(this.scratch, nu);
      if (!(scale > 0)) break;
      const c = 4.685 * scale;
      for (let j = 0; j < K; j++) {
        if (!this.active[j]) continue;
        for (let m = 0; m < M; m++) {
          if (this.seg[m] < 0) continue;
          const idx = j * ms + m;
          const u = (Math.abs(this.re[idx]) * Math.sqrt(this.w[idx])) / c;
          this.wr[idx] = u < 1 ? (1 - u * u) * (1 - u * u) : 0;
        }
      }
    }
    const breaks = this.countBreaks(M);
    const hz = f0Hz + deltaA + delta;
    // var(d) = s² / (4π² Σ w k² Δt²)  (weighted least squares with unknown scale).
    if (!(dofOut >= 1)) {
      if (Number.isFinite(hz) && hz > 0) out.provisionalHz = hz;
      return out;
    }
    // A break found in the data is placed only to a segment: a trace of a mixed segment may stay in the
    // fit. Its reading states 1.5 times the standard error (set on the benchmark's dropout table so that
    // 90 % of readings fall within 2σ; no published source).
    const foundFactor = found > 0 ? FOUND_BREAK_WIDENING : 1;
    const seFit = Math.sqrt(s2 / (TWO_PI * TWO_PI * sxx)) * smallSampleFactor(dofOut) * foundFactor;
    const se = Math.sqrt(seFit * seFit + this.jumpVariance * hz * hz);
    out.ok = Number.isFinite(hz) && hz > 0 && Number.isFinite(se);
    out.hz = hz;
    out.stdErrHz = se;
    out.harmonicsUsed = activeCount;
    out.segments = M;
    out.explainedFraction = totalPower > 0 ? Math.min(1, explained / totalPower) : 0;
    out.dof = dofOut;
    out.breaks = breaks;
    out.foundBreaks = found;
    out.humLeftOutShare = infoOut > 0 ? infoOut / infoIn : 0;
    return out;
  }

  private readonly stT = new Float64Array(MAX_STRETCHES);
  private readonly stY = new Float64Array(MAX_STRETCHES);
  private readonly stW = new Float64Array(MAX_STRETCHES);
  private readonly unwrapped: Float64Array;
  private readonly stat: Float64Array;
  private readonly zs: Float64Array;
  /** From the last search for breaks: see {@link HarmonicRefiner.smallJumpVariance}. */
  private jumpVariance = DOUBLE_ZERO;

  /**
   * Tells the next {@link refine} call where the signal breaks (dropped samples, a restarted stream),
   * in samples from the start of its window. The segment holding a break is left out and each unbroken
   * stretch gets its own phase per harmonic, so the break costs a little precision and adds no bias.
   * Positions outside the window are ignored; at most {@link MAX_BREAKS} are kept. Allocation-free.
   *
   * @param positions - Break positions, samples from the window start.
   * @param count - How many entries of `positions` to use.
   */
  setBreaks(positions: ArrayLike<number>, count: number): void {
    const n = Math.max(0, Math.min(count, MAX_BREAKS, positions.length));
    for (let i = 0; i < n; i++) this.breakPos[i] = positions[i];
    this.knownBreaks = n;
  }

  /** Marks the segments the known breaks fall in (1: left out, 2: a new stretch starts here). */
  private placeKnownBreaks(M: number, L: number, offset: number): void {
    this.cut.fill(0, 0, M);
    for (let q = 0; q < this.knownBreaks; q++) {
      const rel = this.breakPos[q] - offset;
      if (!(rel > 0) || rel >= M * L) continue;
      const m = Math.floor(rel / L);
      if (rel === m * L) {
        if (this.cut[m] === 0) this.cut[m] = 2;
      } else this.cut[m] = 1;
    }
  }

  /** Stretch number of each segment from `cut` into `seg` (−1: left out); returns the number of stretches. */
  private assignStretches(M: number): number {
    let id = 0;
    let used = false;
    for (let m = 0; m < M; m++) {
      const c = this.cut[m];
      if (c === 2 && used && id + 1 < MAX_STRETCHES) {
        id++;
        used = false;
      }
      if (c === 1) {
        this.seg[m] = -1;
        if (used && id + 1 < MAX_STRETCHES) {
          id++;
          used = false;
        }
        continue;
      }
      this.seg[m] = id;
      used = true;
    }
    return used ? id + 1 : Math.max(1, id);
  }

  /**
   * Relative-frequency variance that the phase jumps too small to be taken for breaks may leave in the
   * slope. Every pair past `level` in `stat` (9, the 99.7 % point of χ²_1, raised like the break threshold
   * when there are few pairs) is treated as an uncorrected
   * step: a step of τ seconds at pair m moves a least-squares line's slope by
   * τ·Σ_{n>m}(t_n − t̄)/Σ(t_n − t̄)² over its stretch (the regression's normal equations), and these
   * possible biases enter the uncertainty in quadrature (JCGM 100:2008, 3.2.4 and F.2.4.5: a known
   * systematic effect left uncorrected is carried as an uncertainty).
   */
  private smallJumpVariance(K: number, M: number, f0Hz: number, level: number): number {
    const ms = this.maxSegments;
    const z = this.stat;
    const e = this.scratch;
    const nStretch = this.assignStretches(M);
    // Unweighted mean time per stretch.
    this.stT.fill(0, 0, nStretch);
    this.stW.fill(0, 0, nStretch);
    for (let m = 0; m < M; m++) {
      const r = this.seg[m];
      if (r < 0) continue;
      this.stT[r] += this.t[m];
      this.stW[r] += 1;
    }
    for (let r = 0; r < nStretch; r++) if (this.stW[r] > 0) this.stT[r] /= this.stW[r];
    let sxx = 0;
    for (let m = 0; m < M; m++) {
      const r = this.seg[m];
      if (r >= 0) sxx += (this.t[m] - this.stT[r]) ** 2;
    }
    if (!(sxx > 0)) return 0;
    let v = 0;
    for (let m = 0; m + 1 < M; m++) {
      if (!(z[m] > level)) continue;
      let num = 0;
      let den = 0;
      for (let j = 0; j < K; j++) {
        if (!this.active[j]) continue;
        const wt = Math.min(this.w[j * ms + m], this.w[j * ms + m + 1]);
        num += (wt * e[j * ms + m]) / (TWO_PI * this.hk[j] * f0Hz);
        den += wt;
      }
      if (!(den > 0)) continue;
      const tau = num / den;
      const r = this.seg[m];
      let lever = 0;
      for (let q = m + 1; q < M && this.seg[q] === r; q++) lever += this.t[q] - this.stT[r];
      const bias = (tau * lever) / sxx;
      v += bias * bias;
    }
    return v;
  }

  /**
   * Breaks marked in `cut`: a left-out segment, or a new stretch starting after the first segment. A mark
   * right after a left-out segment belongs to the same break (a break on a segment edge whose segment
   * was found mixed later).
   */
  private countBreaks(M: number): number {
    let n = 0;
    for (let m = 0; m < M; m++) {
      const c = this.cut[m];
      if (c === 0 || (c === 2 && m === 0)) continue;
      if (m > 0 && this.cut[m - 1] !== 0) continue;
      if (m + 1 < M && c === 2 && this.cut[m + 1] === 1) continue;
      n++;
    }
    return n;
  }

  /** Zero weight for every cell of a left-out segment. */
  private zeroDropped(K: number, M: number): void {
    const ms = this.maxSegments;
    for (let m = 0; m < M; m++) {
      if (this.seg[m] >= 0) continue;
      for (let j = 0; j < K; j++) this.w[j * ms + m] = 0;
    }
  }

  /**
   * Stage A: weighted least-squares slope (rad/s) of harmonic slot `j`'s phase, unwrapped sequentially
   * inside each stretch, one intercept per stretch. Leaves the residuals in `re` (row j). NaN on failure.
   */
  private stageA(j: number, M: number, nStretch: number): number {
    const ms = this.maxSegments;
    const ua = this.unwrapped;
    let prevM = -1;
    let prevId = -1;
    for (let m = 0; m < M; m++) {
      const r = this.seg[m];
      if (r < 0) continue;
      const ph = this.phase[j * ms + m];
      ua[m] = r !== prevId ? ph : ua[prevM] + wrapPi(ph - this.phase[j * ms + prevM]);
      prevM = m;
      prevId = r;
    }
    this.stretchMeans(j, M, nStretch, ua, 0, false);
    let sxy = 0;
    let sxx = 0;
    for (let m = 0; m < M; m++) {
      const r = this.seg[m];
      if (r < 0) continue;
      const wt = this.w[j * ms + m];
      const dt = this.t[m] - this.stT[r];
      sxy += wt * dt * (ua[m] - this.stY[r]);
      sxx += wt * dt * dt;
    }
    if (!(sxx > 0)) return NaN;
    const slope = sxy / sxx;
    for (let m = 0; m < M; m++) {
      const r = this.seg[m];
      this.re[j * ms + m] = r < 0 ? 0 : ua[m] - this.stY[r] - slope * (this.t[m] - this.stT[r]);
    }
    return slope;
  }

  /**
   * Looks for breaks the data show but nobody reported, and cuts the fit there (marks in `cut`). A dropout
   * shifts everything after it in time, so every harmonic's phase jumps between two neighbouring segments,
   * while noise and frequency wander change the phase advance from one segment to the next only a little,
   * or slowly. For each pair of neighbouring segments of one stretch and each fitted harmonic, the phase
   * advance is compared with the median advance of the nearby pairs (its local frequency; the median so
   * that a second break close by does not move it). The weighted sum of squares of that excess over the
   * harmonics, in units of its median over all pairs (a robust noise scale, so white phase noise and white
   * frequency noise set their own level), is a χ²-type statistic for a change point at that pair
   * (change-point test in the manner of D. V. Hinkley, "Inference about the change-point in a sequence of
   * random variables", Biometrika 57(1), 1970; robust scale as in Huber, "Robust Statistics", 1981).
   * The strongest pair past 60 (far in the tail of χ²_1, P < 1e-14) whose excess is also a time shift of
   * at least {@link MIN_SHIFT_SECONDS} is a break; once two or more pairs stand past 16 together (see
   * `jointJumps`: several gaps of one length, each leaving only a small phase step whose biases add),
   * 16 is the threshold for the rest of the search. The
   * segment holding it is the one whose other pair also stands out (its phase is a mix of both sides): it
   * is left out. When neither does, the break lies on the segments' common edge and the stretch is split
   * there. Then the search is repeated on the stretches that remain (binary segmentation, one break at a
   * time), up to {@link MAX_FOUND_BREAKS}.
   *
   * When more breaks stand out than {@link MAX_FOUND_BREAKS}, the search stops there and the jumps left
   * uncut enter the uncertainty (see `smallJumpVariance`).
   *
   * @returns The number of breaks found.
   */
  private findBreaks(K: number, M: number, f0Hz: number): number {
    const ms = this.maxSegments;
    const z = this.stat;
    const e = this.scratch;
    let rows = 0;
    for (let j = 0; j < K; j++) if (this.active[j]) rows++;
    if (rows === 0) return 0;
    // Frequency wander and a dropout move every harmonic's phase together (in proportion to k), so over
    // K harmonics the statistic behaves as one degree of freedom, not K: it is scaled and judged as χ²_1,
    // which is the cautious choice when the harmonics' noise is independent too.
    // Far in the tail of χ²_1 (P < 1e-14) for the break itself; past its 99.97 % point for a pair that
    // "stands out" beside it.
    const threshold = 60;
    const standsOut = 13;
    // Past the 99.99 % point of χ²_1 (P = 6.3e-5 per pair; two such pairs in one window of 15 by chance
    // about 1e-6): a pair this high is a break when another one is too (see `jointJumps`).
    const jointLevel = 16;
    const known = this.countBreaks(M);
    this.jumpVariance = 0;
    let found = 0;
    let cuts = 0;
    // Set once two or more pairs stand past `jointLevel` together (to the `few` factor of that moment):
    // from then on that is the threshold.
    let jointFew = 0;
    for (;;) {
      this.assignStretches(M);
      // Pair m joins segments m and m+1 when both are in the same stretch.
      let pairs = 0;
      for (let m = 0; m + 1 < M; m++) if (this.seg[m] >= 0 && this.seg[m] === this.seg[m + 1]) pairs++;
      if (pairs < 3) return found;
      for (let j = 0; j < K; j++) {
        if (!this.active[j]) continue;
        const row = j * ms;
        // Circular weighted mean advance of this harmonic over all pairs.
        let sc = 0;
        let ss = 0;
        for (let m = 0; m + 1 < M; m++) {
          if (this.seg[m] < 0 || this.seg[m] !== this.seg[m + 1]) continue;
          const d = this.phase0[row + m + 1] - this.phase0[row + m];
          const v = Math.min(this.w[row + m], this.w[row + m + 1]);
          sc += v * Math.cos(d);
          ss += v * Math.sin(d);
        }
        const g = Math.atan2(ss, sc);
        const loc = this.zs;
        let nl = 0;
        for (let m = 0; m + 1 < M; m++) {
          const pair = this.seg[m] >= 0 && this.seg[m] === this.seg[m + 1];
          e[row + m] = pair ? wrapPi(this.phase0[row + m + 1] - this.phase0[row + m] - g) : NaN;
          if (pair) loc[nl++] = e[row + m];
        }
        // The median advance, not the mean: the pairs that hold a break do not move it.
        const med = selectMedian(loc, nl);
        for (let m = 0; m + 1 < M; m++) e[row + m] -= med;
      }
      // Statistic per pair.
      let nz = 0;
      for (let m = 0; m + 1 < M; m++) {
        z[m] = NaN;
        if (this.seg[m] < 0 || this.seg[m] !== this.seg[m + 1]) continue;
        let d2 = 0;
        for (let j = 0; j < K; j++) {
          if (!this.active[j]) continue;
          const row = j * ms;
          const r = e[row + m];
          const v = Math.min(this.w[row + m], this.w[row + m + 1]);
          d2 += v * r * r;
        }
        z[m] = d2;
        this.zs[nz++] = d2;
      }
      if (nz < 3) return found;
      // Median of χ²_1: 0.4549 (any statistics handbook, e.g. Abramowitz & Stegun, table 26.8). The median
      // stays a noise scale while up to half the pairs touch a break (three breaks hit six of ~15 pairs).
      const scale = selectMedian(this.zs, nz) / 0.4549;
      if (!(scale > 0)) return found;
      let best = -1;
      for (let m = 0; m + 1 < M; m++) {
        if (!(z[m] === z[m])) continue;
        z[m] /= scale;
        if (best < 0 || z[m] > z[best]) best = m;
      }
      // Fewer pairs give a rougher scale: the threshold rises so that noise alone passes it as rarely.
      const few = Math.max(1, 15 / nz);
      // Once several breaks are established, the pairs left keep the level they were judged at.
      if (!(jointFew > 0) && this.jointJumps(K, M, f0Hz, jointLevel * few)) jointFew = few;
      const level = jointFew > 0 ? jointLevel * jointFew : threshold * few;
      if (best < 0 || !(z[best] > level)) {
        this.jumpVariance = this.smallJumpVariance(K, M, f0Hz, 9 * few);
        return found;
      }
      // The time shift the excess amounts to, weighted over the harmonics.
      let num = 0;
      let den = 0;
      for (let j = 0; j < K; j++) {
        if (!this.active[j]) continue;
        const row = j * ms;
        const v = Math.min(this.w[row + best], this.w[row + best + 1]);
        num += (v * Math.abs(e[row + best])) / (TWO_PI * this.hk[j] * f0Hz);
        den += v;
      }
      if (!(den > 0) || num / den < MIN_SHIFT_SECONDS) return found;
      if (found === MAX_FOUND_BREAKS || cuts === 2 * MAX_FOUND_BREAKS) {
        // More breaks stand out than can be separated (or the tone glides): the jumps left uncut enter
        // the uncertainty, which is then large, and the reading says it spans breaks.
        this.jumpVariance = this.smallJumpVariance(K, M, f0Hz, 9 * few);
        return found;
      }
      const before = best > 0 && z[best - 1] === z[best - 1] ? z[best - 1] : 0;
      const after = best + 2 < M && z[best + 1] === z[best + 1] ? z[best + 1] : 0;
      if (before > standsOut && before >= after) this.cut[best] = 1;
      else if (after > standsOut) this.cut[best + 1] = 1;
      else {
        // Neither neighbour says which segment holds it: leave both out (a mix a little under the noise
        // in one of them would still pull the slope by a few standard errors).
        this.cut[best] = 1;
        this.cut[best + 1] = 1;
      }
      cuts++;
      found = this.countBreaks(M) - known;
    }
  }

  /**
   * Signed time shift, seconds, that the phase excess of pair `m` amounts to, weighted over the harmonics
   * (the excess `e` of harmonic k is 2π·k·f0·τ for a shift τ).
   */
  private pairShift(K: number, m: number, f0Hz: number): number {
    const ms = this.maxSegments;
    let num = 0;
    let den = 0;
    for (let j = 0; j < K; j++) {
      if (!this.active[j]) continue;
      const row = j * ms;
      const v = Math.min(this.w[row + m], this.w[row + m + 1]);
      num += (v * this.scratch[row + m]) / (TWO_PI * this.hk[j] * f0Hz);
      den += v;
    }
    return den > 0 ? num / den : 0;
  }

  /**
   * Whether two or more pairs of the scaled statistic in `stat` stand past `level` together. One pair past
   * it is what noise now and then gives (a window of clean tone or of wandering pitch shows one such pair
   * in a few per cent of windows, never two: 700 simulated windows at 40 dB SNR), so a lone pair needs
   * the full threshold. Several breaks of one length (dropped blocks of one size) each shift the phase by
   * the same small amount, and their biases add: two or more pairs past `level` are taken as breaks.
   * Two neighbouring pairs whose shifts have opposite signs are one odd segment (a click), not a step,
   * and count as none; two neighbouring pairs of one sign are one break split by the segment it falls in.
   */
  private jointJumps(K: number, M: number, f0Hz: number, level: number): boolean {
    const z = this.stat;
    let count = 0;
    for (let m = 0; m + 1 < M; m++) {
      if (!(z[m] > level)) continue;
      const s = this.pairShift(K, m, f0Hz);
      const prev = m > 0 && z[m - 1] > level ? this.pairShift(K, m - 1, f0Hz) : 0;
      const next = m + 2 < M && z[m + 1] > level ? this.pairShift(K, m + 1, f0Hz) : 0;
      if (prev * s < 0 || next * s < 0) continue;
      count++;
    }
    return count >= 2;
  }

  /** Weighted means of segment time and phase of harmonic slot `j`, per stretch, into stT/stY. */
  private weightedMeans(j: number, M: number, nStretch: number): void {
    this.stretchMeans(j, M, nStretch, this.phase, j * this.maxSegments, true);
  }

  /**
   * Weighted means of segment time and of `y[yBase + m]`, per stretch, into stT/stY (stW holds the weight
   * sums). The weight of segment m is that of harmonic slot `j`, times its robust weight when `robust`.
   */
  private stretchMeans(
    j: number,
    M: number,
    nStretch: number,
    y: Float64Array,
    yBase: number,
    robust: boolean,
  ): void {
    const ms = this.maxSegments;
    this.stW.fill(0, 0, nStretch);
    this.stT.fill(0, 0, nStretch);
    this.stY.fill(0, 0, nStretch);
    for (let m = 0; m < M; m++) {
      const r = this.seg[m];
      if (r < 0) continue;
      const idx = j * ms + m;
      const ww = robust ? this.w[idx] * this.wr[idx] : this.w[idx];
      this.stW[r] += ww;
      this.stT[r] += ww * this.t[m];
      this.stY[r] += ww * y[yBase + m];
    }
    for (let r = 0; r < nStretch; r++) {
      if (this.stW[r] > 0) {
        this.stT[r] /= this.stW[r];
        this.stY[r] /= this.stW[r];
      }
    }
  }

  /**
   * The Hann window's transform at offset `dHz`, about the window centre (unnormalised, real). Closed form:
   * with c = (L−1)/2 the window is w[i] = ½ + ½·cos(2π(i−c)/L), so
   * W(θ) = ½·D(θ) + ¼·D(θ + 2π/L) + ¼·D(θ − 2π/L), where D(x) = Σ cos(x(i−c)) = sin(Lx/2)/sin(x/2)
   * is the Dirichlet kernel (F. J. Harris, "On the use of windows for harmonic analysis with the discrete
   * Fourier transform", Proc. IEEE 66(1), 1978).
   */
  private windowLeak(dHz: number, L: number, fs: number): number {
    const th = (TWO_PI * dHz) / fs;
    const step = TWO_PI / L;
    return 0.5 * dirichlet(th, L) + 0.25 * dirichlet(th + step, L) + 0.25 * dirichlet(th - step, L);
  }

  private readonly pair = new Float64Array(2);

  /**
   * Σ xw[i]·exp(−j2πν(s0+i)/fs) for i < L, phase referred to sample 0 of the window, by the Goertzel
   * recurrence s[n] = x[n] + 2cos(ω)·s[n−1] − s[n−2] (G. Goertzel, "An algorithm for the evaluation of finite
   * trigonometric series", Amer. Math. Monthly 65(1), 1958): one multiply and two adds per sample. Then
   * Σ x[n]e^(−jωn) = e^(−jω(L−1))·(s[L−1] − e^(−jω)·s[L−2]).
   */
  private coefficient(xw: Float64Array, L: number, s0: number, nuHz: number, fs: number): void {
    this.gw[0] = (TWO_PI * nuHz) / fs;
    goertzel4(xw, L, this.gw, 1, this.gs);
    this.finishCoefficient(this.gs[0], this.gs[1], L, s0, nuHz, fs);
  }

  private readonly gw = new Float64Array(4);
  private readonly gs = new Float64Array(8);

  /** The end of {@link coefficient}: from the recurrence's last two values to the phase-referred coefficient. */
  private finishCoefficient(s1: number, s2: number, L: number, s0: number, nuHz: number, fs: number): void {
    const w = (TWO_PI * nuHz) / fs;
    // y = s1 − e^(−jω)·s2
    const yr = s1 - Math.cos(w) * s2;
    const yi = Math.sin(w) * s2;
    // Total phase factor e^(−jω(L−1 + s0)), with the cycle count reduced first for accuracy.
    const cyc = (nuHz * (L - 1 + s0)) / fs;
    const a0 = -TWO_PI * (cyc - Math.floor(cyc));
    const pr = Math.cos(a0);
    const pi = Math.sin(a0);
    const accR = yr * pr - yi * pi;
    const accI = yr * pi + yi * pr;
    this.pair[0] = accR;
    this.pair[1] = accI;
  }
}
