/**
 * Thermal tails: after a voltage step the expo converter's junction warms or cools and the pitch creeps
 * towards its settled value as c(t) = c∞ + a·exp(−(t − t0)/τ) (a first-order thermal lag: the exponential
 * settling model, common practice, no source). {@link fitThermalTail} fits that model to the trailing
 * readings and says how far the mean of a capture window still lies from the settled value c∞.
 */
import type { Cents, Seconds } from '../math/index.ts';

/** Shortest time constant tried, seconds (faster tails are over before a plateau can settle). */
const TAU_MIN_SECONDS = 0.05;
/** Time constants tried between the shortest and the longest (log-spaced). */
const TAU_GRID = 48;
/** Fewest readings for a fit. */
const MIN_READINGS = 8;
/**
 * The F ratio by which the exponential (two more parameters) must beat a constant pitch: 10, well above
 * F₀.₉₉(2, ∞) = 4.61 (NIST/SEMATECH e-Handbook of Statistical Methods, §1.3.6.7.3), because neighbouring live
 * readings share samples and are not independent (the margin is common practice, no source; at 3 a clean
 * simulated oscillator was flagged in 2 of 32 steps, at 10 in none).
 */
const F_CRITICAL = 10;
/** Readings farther than this many robust standard deviations from the first fit are left out of the second. */
const OUTLIER_SIGMAS = 5;

/** An exponential tail fitted to the trailing readings (see {@link fitThermalTail}). */
export interface TailFit {
  /** Settled value c∞, in the readings' cents. */
  readonly settledCents: Cents;
  /** Amplitude a of the tail at the first reading used, cents (the sign says from which side it creeps). */
  readonly amplitudeCents: Cents;
  /** Best-fitting time constant, seconds. */
  readonly tauSeconds: Seconds;
  /** Remaining creep in the capture window at the best fit: the window's mean of a·exp(−(t − t0)/τ), cents. */
  readonly residualCents: Cents;
  /**
   * Bound on the remaining creep: the largest |R| + 2·u(R) over every time constant the readings cannot
   * tell from the best one (residual sum of squares within 4·s² of the least), cents.
   */
  readonly residualBoundCents: Cents;
  /**
   * True when the tail is resolved: the fit beats a constant pitch by an F-test,
   * F = ((RSS₀ − RSS)/2)/s² > 10 (see `F_CRITICAL`).
   */
  readonly resolved: boolean;
  /** Standard deviation of the readings about the best fit, cents. */
  readonly scatterCents: Cents;
  /** Readings used. */
  readonly count: number;
}

interface Line {
  p: number;
  a: number;
  rss: number;
  sxx: number;
}

function fitAt(
  times: ArrayLike<number>,
  cents: ArrayLike<number>,
  idx: readonly number[],
  t0: number,
  tau: number,
): Line | null {
  const n = idx.length;
  let sx = 0;
  let sy = 0;
  for (const i of idx) {
    sx += Math.exp(-(times[i] - t0) / tau);
    sy += cents[i];
  }
  const xb = sx / n;
  const yb = sy / n;
  let sxx = 0;
  let sxy = 0;
  for (const i of idx) {
    const dx = Math.exp(-(times[i] - t0) / tau) - xb;
    sxx += dx * dx;
    sxy += dx * (cents[i] - yb);
  }
  if (!(sxx > 1e-12)) return null;
  const a = sxy / sxx;
  const p = yb - a * xb;
  let rss = 0;
  for (const i of idx) rss += (cents[i] - p - a * Math.exp(-(times[i] - t0) / tau)) ** 2;
  return { p, a, rss, sxx };
}

/** Mean of exp(−(t − t0)/τ) over [w0, w1]. */
function windowMean(t0: number, tau: number, w0: number, w1: number): number {
  if (!(w1 > w0)) return Math.exp(-(w1 - t0) / tau);
  return (tau / (w1 - w0)) * (Math.exp(-(w0 - t0) / tau) - Math.exp(-(w1 - t0) / tau));
}

function profile(
  times: ArrayLike<number>,
  cents: ArrayLike<number>,
  idx: readonly number[],
  w0: number,
  w1: number,
  tauMax: number,
): TailFit | null {
  const n = idx.length;
  if (n < MIN_READINGS) return null;
  const t0 = times[idx[0]];
  const taus: number[] = [];
  const fits: (Line | null)[] = [];
  let best = -1;
  for (let k = 0; k < TAU_GRID; k++) {
    const tau = TAU_MIN_SECONDS * Math.pow(tauMax / TAU_MIN_SECONDS, k / (TAU_GRID - 1));
    const f = fitAt(times, cents, idx, t0, tau);
    taus.push(tau);
    fits.push(f);
    if (f && (best < 0 || f.rss < (fits[best] as Line).rss)) best = k;
  }
  if (best < 0) return null;
  const b = fits[best] as Line;
  let mean = 0;
  for (const i of idx) mean += cents[i];
  mean /= n;
  let rss0 = 0;
  for (const i of idx) rss0 += (cents[i] - mean) ** 2;
  // Three parameters (c∞, a, τ); the residual variance is that of the best fit.
  const s2 = b.rss / (n - 3);
  let bound = 0;
  for (let k = 0; k < TAU_GRID; k++) {
    const f = fits[k];
    if (!f || f.rss > b.rss + 4 * s2) continue;
    const m = windowMean(t0, taus[k], w0, w1);
    const r = Math.abs(f.a * m) + 2 * Math.abs(m) * Math.sqrt(s2 / f.sxx);
    if (r > bound) bound = r;
  }
  return {
    settledCents: b.p,
    amplitudeCents: b.a,
    tauSeconds: taus[best],
    residualCents: b.a * windowMean(t0, taus[best], w0, w1),
    residualBoundCents: bound,
    resolved: (rss0 - b.rss) / 2 > F_CRITICAL * s2,
    scatterCents: Math.sqrt(s2),
    count: n,
  };
}

/**
 * Fits c(t) = c∞ + a·exp(−(t − t0)/τ) to the readings in [fromSeconds, toSeconds] (t0 the first of them)
 * and bounds the remaining creep in the capture window [windowStart, windowEnd]: the window's mean lies
 * R = a·τ/T·(e^{−(w0−t0)/τ} − e^{−(w1−t0)/τ}) from the settled value (T = w1 − w0; the exponential settling
 * model, common practice, no source). For each τ on a log grid from 0.05 s to `tauMaxSeconds`, c∞ and a are
 * an ordinary least-squares line in exp(−(t − t0)/τ), with u(a) = s/√Sxx (NIST/SEMATECH e-Handbook of
 * Statistical Methods, §4.1.4.1); τ is profiled: every τ whose residual sum of squares is within 4·s² of
 * the least (about two standard deviations, Δχ² = 4) is kept, and the bound is the largest |R| + 2·u(R)
 * among them. A slow creep the readings cannot tell from a tail of τ up to `tauMaxSeconds` is bounded as
 * such a tail, so `tauMaxSeconds` is the longest tail the caller means to allow for. One pass of outlier
 * rejection (readings more than 5 robust standard deviations, 1.4826·MAD, off the first fit) keeps a lone
 * wild reading from passing for creep.
 *
 * @param times - Reading times, seconds, increasing.
 * @param cents - Their pitches, cents against any fixed reference.
 * @param fromSeconds - First time to use, seconds.
 * @param toSeconds - Last time to use, seconds.
 * @param windowStart - Start of the capture window, seconds.
 * @param windowEnd - End of the capture window, seconds.
 * @param tauMaxSeconds - Longest time constant allowed for, seconds, in (0.05, 600].
 * @returns The fit, or null with fewer than 8 readings (the caller falls back to the trailing slope).
 * @throws RangeError when `tauMaxSeconds` is outside (0.05, 600].
 * @example fitThermalTail(times, cents, t - 4, t, t - 1, t, 3.5)?.residualBoundCents // 0.004
 */
export function fitThermalTail(
  times: ArrayLike<number>,
  cents: ArrayLike<number>,
  fromSeconds: Seconds,
  toSeconds: Seconds,
  windowStart: Seconds,
  windowEnd: Seconds,
  tauMaxSeconds: Seconds,
): TailFit | null {
  if (!(tauMaxSeconds > TAU_MIN_SECONDS && tauMaxSeconds <= 600)) {
    throw new RangeError(
      `tauMaxSeconds must be in (${TAU_MIN_SECONDS}, 600] seconds, got ${String(tauMaxSeconds)}`,
    );
  }
  const idx: number[] = [];
  for (let i = 0; i < times.length; i++) {
    if (times[i] >= fromSeconds - 1e-9 && times[i] <= toSeconds + 1e-9) idx.push(i);
  }
  const first = profile(times, cents, idx, windowStart, windowEnd, tauMaxSeconds);
  if (!first) return null;
  const t0 = times[idx[0]];
  const res = idx.map((i) =>
    Math.abs(
      cents[i] - first.settledCents - first.amplitudeCents * Math.exp(-(times[i] - t0) / first.tauSeconds),
    ),
  );
  const sorted = res.slice().sort((x, y) => x - y);
  const robust = 1.4826 * sorted[Math.floor(sorted.length / 2)];
  if (!(robust > 0)) return first;
  const kept = idx.filter((_, k) => res[k] <= OUTLIER_SIGMAS * robust);
  if (kept.length === idx.length) return first;
  return profile(times, cents, kept, windowStart, windowEnd, tauMaxSeconds) ?? first;
}
