/**
 * Warm-up and drift at one fixed control voltage. Practice is to warm up for 15–30 minutes, or until
 * the drift stays under about 0.1 cent per minute (docs/facts.md, common practice). The rate is the
 * ordinary least-squares slope of cents against time over a trailing window (the regression slope
 * of any statistics text, e.g. Bevington & Robinson ch. 6), computed for every window end from
 * running sums in O(n).
 */
import { studentTQuantile } from '../math/index.ts';
import type { Cents, Hertz, Seconds } from '../math/index.ts';

/** One pitch reading at the fixed voltage. */
export interface DriftReading {
  /** Time of the reading, s; strictly increasing through the array. */
  readonly timeSeconds: Seconds;
  /** Measured frequency, Hz, > 0. */
  readonly hz: Hertz;
}

/** Options for {@link analyzeDrift} and {@link driftRateSeries}. */
export interface DriftOptions {
  /** Length of the trailing window for the rate, s, > 0. Default 120. */
  readonly windowSeconds?: Seconds;
  /** Rate under which the oscillator counts as settled, cents per minute, > 0. Default 0.1. */
  readonly thresholdCentsPerMinute?: number;
  /** How long the rate must have stayed under the threshold, after it first did, to call it settled, s, ≥ 0. Default 60. */
  readonly confirmSeconds?: Seconds;
}

/** The rate stayed under the threshold from `warmUpSeconds` to the end. */
export interface DriftSettled {
  readonly kind: 'settled';
  /**
   * Time from the first reading to the end of the first trailing window whose rate, and every later
   * one's, stayed under the threshold, s: the moment the oscillator could be called warm.
   */
  readonly warmUpSeconds: Seconds;
  /** Absolute time of that moment (same clock as the readings), s. */
  readonly settledAtSeconds: Seconds;
  /** Last reading minus the first reading at or after `settledAtSeconds`, cents. */
  readonly totalDriftCents: Cents;
  /** Rate over the final trailing window, cents per minute. */
  readonly driftRateCentsPerMinute: number;
  /** Largest |rate| of any full window after settling, cents per minute. */
  readonly maxSettledRateCentsPerMinute: number;
  /** Standard error of the final window's rate (regression), cents per minute. */
  readonly driftRateStdErrCentsPerMinute: number;
  /** Upper bound of |rate| over the final window (one-sided 95 %, Student t), cents per minute. */
  readonly rateUpperBoundCentsPerMinute: number;
  /** Drift since settling from the fitted lines (final window's line at the last reading minus the settling window's at its end), cents. */
  readonly totalDriftFittedCents: Cents;
}

/** The rate has not stayed under the threshold (long enough) yet. */
export interface DriftNotSettled {
  readonly kind: 'not-yet-settled';
  /** Last reading minus the first reading, cents. */
  readonly totalDriftCents: Cents;
  /** Rate over the final trailing window, cents per minute. */
  readonly driftRateCentsPerMinute: number;
  /** Standard error of the final window's rate (regression), cents per minute. */
  readonly driftRateStdErrCentsPerMinute: number;
  /** Upper bound of |rate| over the final window (one-sided 95 %, Student t), cents per minute. */
  readonly rateUpperBoundCentsPerMinute: number;
  /** Drift from the fitted lines: the final window's line at the last reading minus the first window's at the first reading, cents. */
  readonly totalDriftFittedCents: Cents;
}

/** Not enough data: fewer than 3 readings, or the readings span less than one window. */
export interface DriftNone {
  readonly kind: 'none';
  readonly reason: 'too-few-readings' | 'shorter-than-window';
}

/** Outcome of {@link analyzeDrift}. */
export type DriftResult = DriftSettled | DriftNotSettled | DriftNone;

/** One point of the rate-versus-time curve. */
export interface DriftRatePoint {
  /** End time of the trailing window, s. */
  readonly timeSeconds: Seconds;
  /** Least-squares slope over the window, cents per minute. */
  readonly centsPerMinute: number;
  /**
   * Standard error of the slope, cents per minute: `√(s²/Σ(t − t̄)²)` with `s² = RSS/(m − 2)` (Bevington &
   * Robinson ch. 6); 0 with exactly 3 collinear readings.
   */
  readonly stdErrCentsPerMinute: number;
  /** Readings in the window. */
  readonly count: number;
}

/** A window's line, for fitted values: cents at time t are `intercept + slope·(t − t0)` (cents per second). */
interface WindowLine {
  readonly slopePerSecond: number;
  readonly interceptCents: Cents;
}

function validate(readings: readonly DriftReading[], opts: DriftOptions) {
  const windowSeconds = opts.windowSeconds ?? 120;
  const threshold = opts.thresholdCentsPerMinute ?? 0.1;
  const confirm = opts.confirmSeconds ?? 60;
  if (!Number.isFinite(windowSeconds) || windowSeconds <= 0) {
    throw new RangeError(`windowSeconds must be a finite number greater than 0, got ${windowSeconds}`);
  }
  if (!Number.isFinite(threshold) || threshold <= 0) {
    throw new RangeError(`thresholdCentsPerMinute must be a finite number greater than 0, got ${threshold}`);
  }
  if (!Number.isFinite(confirm) || confirm < 0) {
    throw new RangeError(`confirmSeconds must be a finite number at least 0, got ${confirm}`);
  }
  readings.forEach((r, i) => {
    if (!Number.isFinite(r.timeSeconds)) {
      throw new RangeError(`readings[${i}].timeSeconds must be a finite number, got ${r.timeSeconds}`);
    }
    if (i > 0 && !(r.timeSeconds > readings[i - 1].timeSeconds)) {
      throw new RangeError(
        `readings[${i}].timeSeconds must be greater than readings[${i - 1}].timeSeconds (${readings[i - 1].timeSeconds}), got ${r.timeSeconds}`,
      );
    }
    if (!Number.isFinite(r.hz) || r.hz <= 0) {
      throw new RangeError(`readings[${i}].hz must be a finite number greater than 0, got ${r.hz}`);
    }
  });
  return { windowSeconds, threshold, confirm };
}

/** Rate series over full windows with at least 3 readings, from prefix sums of t, t², c, c² and t·c. */
function ratesWithLines(
  readings: readonly DriftReading[],
  windowSeconds: number,
): { points: DriftRatePoint[]; lines: WindowLine[] } {
  const n = readings.length;
  if (n === 0) return { points: [], lines: [] };
  const t0 = readings[0].timeSeconds;
  const f0 = readings[0].hz;
  const st = new Float64Array(n + 1);
  const stt = new Float64Array(n + 1);
  const sc = new Float64Array(n + 1);
  const scc = new Float64Array(n + 1);
  const stc = new Float64Array(n + 1);
  for (let i = 0; i < n; i++) {
    const t = readings[i].timeSeconds - t0;
    const c = 1200 * Math.log2(readings[i].hz / f0);
    st[i + 1] = st[i] + t;
    stt[i + 1] = stt[i] + t * t;
    sc[i + 1] = sc[i] + c;
    scc[i + 1] = scc[i] + c * c;
    stc[i + 1] = stc[i] + t * c;
  }
  const points: DriftRatePoint[] = [];
  const lines: WindowLine[] = [];
  let start = 0;
  for (let j = 0; j < n; j++) {
    const tEnd = readings[j].timeSeconds;
    if (tEnd - t0 < windowSeconds) continue;
    while (readings[start].timeSeconds < tEnd - windowSeconds) start++;
    const m = j - start + 1;
    if (m < 3) continue;
    const sT = st[j + 1] - st[start];
    const sTT = stt[j + 1] - stt[start];
    const sC = sc[j + 1] - sc[start];
    const sCC = scc[j + 1] - scc[start];
    const sTC = stc[j + 1] - stc[start];
    const varT = sTT - (sT * sT) / m;
    if (!(varT > 0)) continue;
    const covTC = sTC - (sT * sC) / m;
    const slope = covTC / varT; // cents per second
    const varC = sCC - (sC * sC) / m;
    const rss = Math.max(0, varC - slope * covTC);
    const se = Math.sqrt(rss / (m - 2) / varT);
    points.push({ timeSeconds: tEnd, centsPerMinute: slope * 60, stdErrCentsPerMinute: se * 60, count: m });
    lines.push({ slopePerSecond: slope, interceptCents: sC / m - (slope * sT) / m });
  }
  return { points, lines };
}

function rates(readings: readonly DriftReading[], windowSeconds: number): DriftRatePoint[] {
  return ratesWithLines(readings, windowSeconds).points;
}

const quantileCache = new Map<number, number>();
/** One-sided 95 % Student t quantile for a window of m readings (m − 2 dof), cached. */
function upperQuantile(m: number): number {
  const dof = Math.max(1, m - 2);
  let q = quantileCache.get(dof);
  if (q === undefined) {
    q = studentTQuantile(0.95, dof);
    quantileCache.set(dof, q);
  }
  return q;
}

/**
 * Drift rate against time: the least-squares slope of cents (relative to the first reading) over
 * each trailing window `[t − windowSeconds, t]`, for every reading time t at least one window after
 * the first reading whose window holds at least 3 readings.
 *
 * @param readings - Readings at one voltage, strictly increasing in time, Hz > 0.
 * @param opts - `windowSeconds` (default 120).
 * @returns One point per qualifying reading, in time order (empty when none qualify).
 * @throws RangeError naming the first invalid field or option.
 * @example
 * // One reading a second drifting a steady 0.25 cent per minute:
 * driftRateSeries(readings, { windowSeconds: 60 })[0] // { timeSeconds: 60, centsPerMinute: 0.25 }
 */
export function driftRateSeries(
  readings: readonly DriftReading[],
  opts: DriftOptions = {},
): DriftRatePoint[] {
  const { windowSeconds } = validate(readings, opts);
  return rates(readings, windowSeconds);
}

/**
 * Total drift, current drift rate and warm-up time of an oscillator held at one voltage.
 *
 * Each trailing window's rate comes with its regression standard error and a one-sided 95 % bound from
 * Student's t with m − 2 degrees of freedom. The warm-up time is the end of the first window whose rate's
 * upper bound is under `thresholdCentsPerMinute` (default 0.1 cent/min, docs/facts.md common practice) and
 * after which no window's rate is significantly above it (its lower bound stays under), provided that
 * stretch lasts at least `confirmSeconds`; otherwise the result is `'not-yet-settled'`. So reading noise
 * widens the bounds instead of postponing the verdict with chance excursions. Totals are given from the
 * readings and from the fitted lines (which average the reading noise away).
 *
 * @param readings - Readings at one voltage, strictly increasing in time, Hz > 0.
 * @param opts - Window, threshold and confirmation time.
 * @returns Settled, not yet settled, or `{ kind: 'none', reason }` when there is too little data.
 * @throws RangeError naming the first invalid field or option.
 * @example
 * // One reading a second for an hour, settling as 5·(1 − e^(−t/300 s)) cents:
 * analyzeDrift(readings) // { kind: 'settled', warmUpSeconds: 752, totalDriftCents: 0.408…, driftRateCentsPerMinute: 0.000 008…, … }
 */
export function analyzeDrift(readings: readonly DriftReading[], opts: DriftOptions = {}): DriftResult {
  const { windowSeconds, threshold, confirm } = validate(readings, opts);
  if (readings.length < 3) return { kind: 'none', reason: 'too-few-readings' };
  const { points: series, lines } = ratesWithLines(readings, windowSeconds);
  if (series.length === 0) return { kind: 'none', reason: 'shorter-than-window' };
  const t0 = readings[0].timeSeconds;
  const last = readings[readings.length - 1];
  const final = series[series.length - 1];
  const upper = (p: DriftRatePoint) =>
    Math.abs(p.centsPerMinute) + upperQuantile(p.count) * p.stdErrCentsPerMinute;
  const lower = (p: DriftRatePoint) =>
    Math.abs(p.centsPerMinute) - upperQuantile(p.count) * p.stdErrCentsPerMinute;
  const fitted = (k: number, t: number) => lines[k].interceptCents + lines[k].slopePerSecond * (t - t0);
  const finalFields = {
    driftRateCentsPerMinute: final.centsPerMinute,
    driftRateStdErrCentsPerMinute: final.stdErrCentsPerMinute,
    rateUpperBoundCentsPerMinute: upper(final),
  };
  // Warm from the first window whose rate's upper bound is under the threshold, provided no later window's
  // rate is significantly above it (its lower bound stays under) for at least confirmSeconds.
  let k = series.length;
  while (k > 0 && lower(series[k - 1]) < threshold) k--;
  while (k < series.length && !(upper(series[k]) < threshold)) k++;
  const cents = (a: DriftReading, b: DriftReading) => 1200 * Math.log2(b.hz / a.hz);
  if (k === series.length || last.timeSeconds - series[k].timeSeconds < confirm) {
    return {
      kind: 'not-yet-settled',
      totalDriftCents: cents(readings[0], last),
      ...finalFields,
      totalDriftFittedCents: fitted(series.length - 1, last.timeSeconds) - fitted(0, t0),
    };
  }
  const settledAt = series[k].timeSeconds;
  const firstSettled = readings.find((r) => r.timeSeconds >= settledAt) ?? last;
  let maxRate = 0;
  for (let i = k; i < series.length; i++) maxRate = Math.max(maxRate, Math.abs(series[i].centsPerMinute));
  return {
    kind: 'settled',
    warmUpSeconds: settledAt - t0,
    settledAtSeconds: settledAt,
    totalDriftCents: cents(firstSettled, last),
    ...finalFields,
    maxSettledRateCentsPerMinute: maxRate,
    totalDriftFittedCents: fitted(series.length - 1, last.timeSeconds) - fitted(k, settledAt),
  };
}

/** The straight line through a whole drift log, with honest uncertainties. */
export interface DriftTrend {
  readonly kind: 'ok';
  /** Readings used. */
  readonly count: number;
  /** Time of the first and last reading, s. */
  readonly startSeconds: Seconds;
  readonly endSeconds: Seconds;
  /** The line's pitch at the first and last reading, Hz. */
  readonly startHz: Hertz;
  readonly endHz: Hertz;
  /** Standard uncertainty of the line at either end, cents. */
  readonly endUncertaintyCents: Cents;
  /** The line's pitch at the mean reading time (the best single figure), Hz, and its standard uncertainty, cents. */
  readonly meanHz: Hertz;
  readonly meanUncertaintyCents: Cents;
  /** Slope, cents per minute, and its standard uncertainty. */
  readonly rateCentsPerMinute: number;
  readonly rateUncertaintyCentsPerMinute: number;
  /** Line's end minus its start, cents, and its standard uncertainty. */
  readonly driftCents: Cents;
  readonly driftUncertaintyCents: Cents;
  /** Standard deviation of the readings about the line, cents. */
  readonly scatterCents: Cents;
  /** Lag-1 autocorrelation of the residuals, clamped to [0, 0.99]. */
  readonly lag1Autocorrelation: number;
  /** Effective number of independent readings, n·(1 − r₁)/(1 + r₁). */
  readonly effectiveCount: number;
}

/**
 * The least-squares line of cents against time through a whole log: start, end, mean and rate, each with
 * its standard uncertainty. The readings of a tracker overlap and wander together, so the residuals are
 * correlated and the textbook standard error would be far too small; it is widened by the effective
 * sample size for AR(1) residuals, n_eff = n·(1 − r₁)/(1 + r₁), with r₁ the lag-1 autocorrelation of the
 * residuals (Santer et al., "Statistical significance of trends and trend differences in layer-average
 * atmospheric temperature time series", J. Geophys. Res. 105 (2000) 7337, eq. 6; the slope's standard
 * error is Bevington & Robinson ch. 6). The residual variance uses n_eff − 2 degrees of freedom. Where the
 * readings carry their own standard uncertainties, the variance per reading is the larger of the scatter
 * about the line and the mean of their squares (the external and internal estimates, R. T. Birge, Phys.
 * Rev. 40 (1932) 207), so a clean synthetic tone cannot claim more than the estimator itself does.
 *
 * @param readings - Readings at one voltage, strictly increasing in time, Hz > 0.
 * @returns The line, or `{ kind: 'none', reason: 'too-few-readings' }` with fewer than 4 readings.
 * @throws RangeError naming the first invalid field.
 * @example
 * // One reading a second for 10 min rising a steady 0.1 cent per minute:
 * driftTrend(readings) // { kind: 'ok', rateCentsPerMinute: 0.1, driftCents: 0.998…, … }
 */
export function driftTrend(
  readings: readonly (DriftReading & { readonly uncertaintyCents?: Cents })[],
): DriftTrend | DriftNone {
  validate(readings, {});
  const n = readings.length;
  if (n < 4) return { kind: 'none', reason: 'too-few-readings' };
  const t0 = readings[0].timeSeconds;
  const f0 = readings[0].hz;
  let st = 0;
  let sc = 0;
  for (const r of readings) {
    st += r.timeSeconds - t0;
    sc += 1200 * Math.log2(r.hz / f0);
  }
  const tMean = st / n;
  const cMean = sc / n;
  let stt = 0;
  let stc = 0;
  for (const r of readings) {
    const dt = r.timeSeconds - t0 - tMean;
    stt += dt * dt;
    stc += dt * (1200 * Math.log2(r.hz / f0) - cMean);
  }
  const slope = stt > 0 ? stc / stt : 0; // cents per second
  const residual = (i: number) =>
    1200 * Math.log2(readings[i].hz / f0) - (cMean + slope * (readings[i].timeSeconds - t0 - tMean));
  let ss = 0;
  let lag = 0;
  let prev = residual(0);
  ss += prev * prev;
  for (let i = 1; i < n; i++) {
    const e = residual(i);
    ss += e * e;
    lag += e * prev;
    prev = e;
  }
  const r1 = ss > 0 ? Math.min(0.99, Math.max(0, lag / ss)) : 0;
  const nEff = Math.max(3, (n * (1 - r1)) / (1 + r1));
  const s2 = ss / Math.max(1, n - 2); // scatter about the line
  // Santer et al. (2000): s_e² = Σe²/(n_eff − 2), s_b² = s_e²/Σ(t − t̄)²; the mean's variance is s_e²/n.
  let internal = 0;
  for (const r of readings) internal += (r.uncertaintyCents ?? 0) ** 2;
  internal /= n;
  const s2Eff = Math.max(ss / Math.max(1, nEff - 2), internal);
  const uSlope = stt > 0 ? Math.sqrt(s2Eff / stt) : Infinity; // cents per second
  const uMean = Math.sqrt(s2Eff / n);
  const tStart = -tMean;
  const tEnd = readings[n - 1].timeSeconds - t0 - tMean;
  const atEnd = (dt: number) => Math.sqrt(uMean * uMean + dt * dt * uSlope * uSlope);
  const hzAt = (dt: number) => f0 * Math.pow(2, (cMean + slope * dt) / 1200);
  const span = readings[n - 1].timeSeconds - t0;
  return {
    kind: 'ok',
    count: n,
    startSeconds: t0,
    endSeconds: readings[n - 1].timeSeconds,
    startHz: hzAt(tStart),
    endHz: hzAt(tEnd),
    endUncertaintyCents: Math.max(atEnd(tStart), atEnd(tEnd)),
    meanHz: hzAt(0),
    meanUncertaintyCents: uMean,
    rateCentsPerMinute: slope * 60,
    rateUncertaintyCentsPerMinute: uSlope * 60,
    driftCents: slope * span,
    driftUncertaintyCents: uSlope * span,
    scatterCents: Math.sqrt(s2),
    lag1Autocorrelation: r1,
    effectiveCount: nEff,
  };
}
