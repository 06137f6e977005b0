/**
 * Plateau detection: finds where a stream of pitch readings has settled.
 *
 * ## The rule
 * At each reading, let σ̄ be the mean reported uncertainty (cents) of the readings in the trailing
 * `settleSeconds`. The band's half-width is
 *
 *     h = clamp(k·σ̄ / √g, minHalfWidthCents, maxHalfWidthCents)        (defaults k = 3, 0.05, 0.3 cent)
 *
 * where g, the group size, is 1 for ordinary readings (k·σ̄ ≤ maxHalfWidthCents, i.e. σ̄ ≤ 0.1 cent by default)
 * and otherwise the smallest number of readings whose mean is good enough for the band,
 * g = ⌈(k·σ̄ / maxHalfWidthCents)²⌉ (the standard error of a mean of g readings is σ/√g, JCGM 100:2008 §4.2.3).
 * Walking back from the newest reading in groups of g, the *stable stretch* is the longest run of groups
 * whose means all fit in a band 2h wide. The pitch has settled when the stable stretch spans at least
 * `settleSeconds` and holds at least max(minReadings, 3·g) readings.
 *
 * Because the test looks at a trailing stretch rather than from the first reading after a step, a thermal
 * tail (creep that is slowing down) settles as soon as the creep inside the last `settleSeconds` fits the
 * band; and a transient shorter than `settleSeconds` (a hand overshooting a knob) can never be a plateau,
 * since no stable stretch that includes it spans the settle time.
 *
 * Once settled, the plateau goes on while readings stay within `max(k·σ̄ₚ, minHalfWidthCents) + maxHalfWidthCents`
 * of the plateau's mean (σ̄ₚ: the plateau's mean uncertainty); it ends at the second reading in a row outside
 * that (a lone wild reading is left out of the plateau's statistics), or at a gap in the readings longer
 * than `maxGapSeconds` (silence, lost signal).
 *
 * Cents are `1200·log2(f/fref)` (A. J. Ellis, 1885; docs/facts.md: 1 V = 1200 cents at 1 V/oct).
 *
 * ## State
 * The detector's state is plain JSON ({@link PlateauDetectorState}), so the calibration run can keep it
 * in its own serialisable state. {@link pushReading} updates it in place; cost per reading is bounded by
 * the readings held (at most `maxSettleSeconds` of them, about 200 at 20 readings/s), independent of how
 * long the stream runs.
 */
import type { PitchReading } from '../pitch/index.ts';
import type { Cents, Hertz, Seconds } from '../math/index.ts';

/** Settings of the plateau detector. All optional; see {@link DEFAULT_PLATEAU_OPTIONS}. */
export interface PlateauOptions {
  /** How long the pitch must stay in the band, seconds, in (0, 60]. Default 0.5. */
  readonly settleSeconds: Seconds;
  /** k: band half-width in units of the readings' mean uncertainty, in [1, 10]. Default 3. */
  readonly sigmaMultiple: number;
  /** Floor of the band half-width, cents, in [0.001, maxHalfWidthCents]. Default 0.05. */
  readonly minHalfWidthCents: Cents;
  /** Cap of the band half-width, cents, in (0, 100]. Default 0.3. */
  readonly maxHalfWidthCents: Cents;
  /** Longest gap between readings with a pitch that does not break a plateau, seconds, in (0, 10]. Default 0.25. */
  readonly maxGapSeconds: Seconds;
  /** Fewest readings in a plateau, integer in [2, 1000]. Default 5. */
  readonly minReadings: number;
  /** Longest stretch the detector looks back over (noisy readings need longer), seconds, ≥ settleSeconds, ≤ 120. Default 10. */
  readonly maxSettleSeconds: Seconds;
  /** How many of a plateau's latest readings its median is taken over, integer in [1, 100000]. Default 1024. */
  readonly maxMedianReadings: number;
}

/** The defaults of {@link PlateauOptions}. */
export const DEFAULT_PLATEAU_OPTIONS: PlateauOptions = Object.freeze({
  settleSeconds: 0.5,
  sigmaMultiple: 3,
  minHalfWidthCents: 0.05,
  maxHalfWidthCents: 0.3,
  maxGapSeconds: 0.25,
  minReadings: 5,
  maxSettleSeconds: 10,
  maxMedianReadings: 1024,
});

/** Number of groups a stable stretch needs when readings are averaged in groups (g > 1). */
const MIN_GROUPS = 3;
/** Slack on time comparisons, seconds (readings' times are sums of float steps). */
const TIME_EPS = 1e-9;
/** Consecutive out-of-band readings that end a plateau. */
const OUTSIDE_TO_END = 2;

function checkRange(
  name: string,
  v: unknown,
  lo: number,
  hi: number,
  opts: { loOpen?: boolean; integer?: boolean } = {},
): void {
  const ok =
    typeof v === 'number' &&
    Number.isFinite(v) &&
    (opts.loOpen ? v > lo : v >= lo) &&
    v <= hi &&
    (!opts.integer || Number.isInteger(v));
  if (!ok) {
    const kind = opts.integer ? 'an integer' : 'a finite number';
    throw new RangeError(
      `${name} must be ${kind} in ${opts.loOpen ? '(' : '['}${lo}, ${hi}], got ${String(v)}`,
    );
  }
}

/**
 * Fills in and checks plateau options.
 *
 * @param options - Any subset of {@link PlateauOptions}.
 * @returns Complete options.
 * @throws RangeError naming the option, its value and the allowed range.
 * @example resolvePlateauOptions({ settleSeconds: 1 }).maxHalfWidthCents // 0.3
 */
export function resolvePlateauOptions(options: Partial<PlateauOptions> = {}): PlateauOptions {
  const o: PlateauOptions = { ...DEFAULT_PLATEAU_OPTIONS, ...options };
  checkRange('settleSeconds', o.settleSeconds, 0, 60, { loOpen: true });
  checkRange('sigmaMultiple', o.sigmaMultiple, 1, 10);
  checkRange('maxHalfWidthCents', o.maxHalfWidthCents, 0, 100, { loOpen: true });
  checkRange('minHalfWidthCents', o.minHalfWidthCents, 0.001, o.maxHalfWidthCents);
  checkRange('maxGapSeconds', o.maxGapSeconds, 0, 10, { loOpen: true });
  checkRange('minReadings', o.minReadings, 2, 1000, { integer: true });
  checkRange('maxSettleSeconds', o.maxSettleSeconds, o.settleSeconds, 120);
  checkRange('maxMedianReadings', o.maxMedianReadings, 1, 100000, { integer: true });
  return o;
}

/** A settled stretch of pitch. */
export interface Plateau {
  /** Time of the first reading of the stable stretch (settled from), seconds. */
  readonly startSeconds: Seconds;
  /** Time of the latest reading in the plateau, seconds. */
  readonly endSeconds: Seconds;
  /** Time at which the settle test first passed, seconds. */
  readonly settledAtSeconds: Seconds;
  /** Readings in the plateau (lone wild readings excluded). */
  readonly count: number;
  /** Mean pitch (mean in cents, returned as Hz), Hz. */
  readonly meanHz: Hertz;
  /** Median pitch over the latest `maxMedianReadings` readings, Hz. */
  readonly medianHz: Hertz;
  /** Sample standard deviation of the readings, cents (0 when count < 2). */
  readonly spreadCents: Cents;
  /** Standard error of the mean, cents: spread/√count, or the mean uncertainty/√count when count < 2 (JCGM 100:2008 §4.2.3). */
  readonly standardErrorCents: Cents;
  /** Mean of the readings' reported uncertainties, cents. */
  readonly meanUncertaintyCents: Cents;
  /** Half-width of the band the settle test used, cents. */
  readonly halfWidthCents: Cents;
  /** Readings averaged per group in the settle test (1 unless readings were noisy). */
  readonly groupSize: number;
}

/** An open plateau inside the detector state (plain JSON). */
export interface OpenPlateauState {
  startSeconds: number;
  endSeconds: number;
  settledAtSeconds: number;
  count: number;
  /** Running mean, cents relative to the detector's anchor (Welford). */
  meanCents: number;
  /** Running sum of squared deviations, cents² (Welford). */
  m2: number;
  sumSigma: number;
  /** Latest readings in cents relative to the anchor, for the median. */
  recent: number[];
  /** Consecutive readings outside the band. */
  outside: number;
  halfWidthCents: number;
  groupSize: number;
}

/** The detector's whole state: plain JSON, no classes, no NaN or Infinity. */
export interface PlateauDetectorState {
  /** Reference frequency of the cents held in `cents` and `open`, Hz; null when nothing is held. */
  anchorHz: number | null;
  /** Times of the held readings (one unbroken run, the latest `maxSettleSeconds`), seconds. */
  times: number[];
  /** Their pitches, cents relative to `anchorHz`. */
  cents: number[];
  /** Their reported uncertainties, cents. */
  sigmas: number[];
  /** Time of the latest reading with a pitch, seconds. */
  lastOkSeconds: number | null;
  /** Time of the latest reading of any kind, seconds. */
  lastSeconds: number | null;
  /** The plateau in progress, if any. */
  open: OpenPlateauState | null;
}

/** What the detector sees now. */
export type PlateauStatus =
  | { readonly kind: 'no-signal' }
  | {
      readonly kind: 'settling';
      /** How far the settle test has got, 0…1. */
      readonly progress: number;
      /** Start of the current stable stretch, seconds (null when there is none). */
      readonly stableSinceSeconds: Seconds | null;
      /** Latest pitch, Hz. */
      readonly latestHz: Hertz;
      readonly halfWidthCents: Cents;
      readonly groupSize: number;
    }
  | {
      readonly kind: 'settled';
      readonly startSeconds: Seconds;
      readonly meanHz: Hertz;
      readonly count: number;
    };

/** What one reading changed. */
export interface PlateauUpdate {
  /** A plateau that settled with this reading. */
  readonly settled: Plateau | null;
  /** A plateau that ended with this reading (its `endSeconds` is its last in-band reading). */
  readonly ended: Plateau | null;
  /** True when this reading came after a gap longer than `maxGapSeconds`, which cleared the detector. */
  readonly gap: boolean;
  /** Why the reading was not used, when it was not. */
  readonly ignored: 'out-of-order' | 'bad-time' | null;
  /** Status after the reading. */
  readonly status: PlateauStatus;
}

/**
 * A fresh, empty detector state.
 *
 * @example createPlateauState().open // null
 */
export function createPlateauState(): PlateauDetectorState {
  return {
    anchorHz: null,
    times: [],
    cents: [],
    sigmas: [],
    lastOkSeconds: null,
    lastSeconds: null,
    open: null,
  };
}

/**
 * A deep copy of a detector state (for callers that keep states immutable).
 *
 * @example clonePlateauState(createPlateauState()).times // []
 */
export function clonePlateauState(s: PlateauDetectorState): PlateauDetectorState {
  return {
    anchorHz: s.anchorHz,
    times: s.times.slice(),
    cents: s.cents.slice(),
    sigmas: s.sigmas.slice(),
    lastOkSeconds: s.lastOkSeconds,
    lastSeconds: s.lastSeconds,
    open: s.open ? { ...s.open, recent: s.open.recent.slice() } : null,
  };
}

function centsToHz(anchorHz: number, cents: number): number {
  return anchorHz * Math.pow(2, cents / 1200);
}

function median(values: readonly number[]): number {
  const a = values.slice().sort((x, y) => x - y);
  const m = a.length >> 1;
  return a.length % 2 === 1 ? a[m] : (a[m - 1] + a[m]) / 2;
}

function snapshot(anchorHz: number, p: OpenPlateauState): Plateau {
  const spread = p.count >= 2 ? Math.sqrt(p.m2 / (p.count - 1)) : 0;
  const meanU = p.sumSigma / p.count;
  return {
    startSeconds: p.startSeconds,
    endSeconds: p.endSeconds,
    settledAtSeconds: p.settledAtSeconds,
    count: p.count,
    meanHz: centsToHz(anchorHz, p.meanCents),
    medianHz: centsToHz(anchorHz, median(p.recent)),
    spreadCents: spread,
    standardErrorCents: (p.count >= 2 ? spread : meanU) / Math.sqrt(p.count),
    meanUncertaintyCents: meanU,
    halfWidthCents: p.halfWidthCents,
    groupSize: p.groupSize,
  };
}

/**
 * The plateau in progress as a {@link Plateau}, or null.
 *
 * @example openPlateau(createPlateauState()) // null
 */
export function openPlateau(state: PlateauDetectorState): Plateau | null {
  return state.open && state.anchorHz !== null ? snapshot(state.anchorHz, state.open) : null;
}

interface Evaluation {
  settled: boolean;
  progress: number;
  stableStart: number;
  halfWidth: number;
  groupSize: number;
}

function evaluate(s: PlateauDetectorState, o: PlateauOptions): Evaluation {
  const n = s.times.length;
  const tn = s.times[n - 1];
  let sumU = 0;
  let m = 0;
  for (let i = n - 1; i >= 0 && s.times[i] >= tn - o.settleSeconds - TIME_EPS; i--) {
    sumU += s.sigmas[i];
    m++;
  }
  const kSigma = (o.sigmaMultiple * sumU) / m;
  const g = kSigma <= o.maxHalfWidthCents ? 1 : Math.ceil((kSigma / o.maxHalfWidthCents) ** 2 - 1e-9);
  const h = Math.min(o.maxHalfWidthCents, Math.max(o.minHalfWidthCents, kSigma / Math.sqrt(g)));
  const required = Math.max(o.minReadings, g > 1 ? MIN_GROUPS * g : 0);
  let lo = Infinity;
  let hi = -Infinity;
  let stableStart = n;
  for (let j = n; j - g >= 0; j -= g) {
    let sum = 0;
    for (let i = j - g; i < j; i++) sum += s.cents[i];
    const mean = sum / g;
    lo = Math.min(lo, mean);
    hi = Math.max(hi, mean);
    if (hi - lo > 2 * h) break;
    stableStart = j - g;
  }
  const count = n - stableStart;
  if (count === 0) return { settled: false, progress: 0, stableStart, halfWidth: h, groupSize: g };
  const duration = tn - s.times[stableStart];
  const settled = count >= required && duration >= o.settleSeconds - TIME_EPS;
  const progress = settled ? 1 : Math.max(0, Math.min(1, duration / o.settleSeconds, count / required));
  return { settled, progress, stableStart, halfWidth: h, groupSize: g };
}

function clearHeld(s: PlateauDetectorState): void {
  s.anchorHz = null;
  s.times.length = 0;
  s.cents.length = 0;
  s.sigmas.length = 0;
  s.lastOkSeconds = null;
}

function statusOf(s: PlateauDetectorState, ev: Evaluation | null): PlateauStatus {
  if (s.open && s.anchorHz !== null) {
    return {
      kind: 'settled',
      startSeconds: s.open.startSeconds,
      meanHz: centsToHz(s.anchorHz, s.open.meanCents),
      count: s.open.count,
    };
  }
  if (s.times.length === 0 || s.anchorHz === null) return { kind: 'no-signal' };
  const e = ev ?? null;
  return {
    kind: 'settling',
    progress: e ? e.progress : 0,
    stableSinceSeconds: e && e.stableStart < s.times.length ? s.times[e.stableStart] : null,
    latestHz: centsToHz(s.anchorHz, s.cents[s.cents.length - 1]),
    halfWidthCents: e ? e.halfWidth : 0,
    groupSize: e ? e.groupSize : 1,
  };
}

/**
 * True when a reading (or anything shaped like one, such as a saved record's) carries a pitch a plateau can
 * use: kind `ok`, a finite pitch above 0 Hz and a finite uncertainty of at least 0 cents.
 *
 * @param r - The reading.
 * @example isUsablePitch({ kind: 'ok', hz: 440, uncertaintyCents: 0.02 }) // true
 */
export function isUsablePitch<T extends object>(
  r: T,
): r is T & { readonly kind: 'ok'; readonly hz: number; readonly uncertaintyCents: number } {
  const x = r as { readonly kind?: unknown; readonly hz?: unknown; readonly uncertaintyCents?: unknown };
  return (
    x.kind === 'ok' &&
    typeof x.hz === 'number' &&
    Number.isFinite(x.hz) &&
    x.hz > 0 &&
    typeof x.uncertaintyCents === 'number' &&
    Number.isFinite(x.uncertaintyCents) &&
    x.uncertaintyCents >= 0
  );
}

/**
 * Feeds one reading to the detector, updating `state` in place.
 *
 * Readings must come in time order; one whose `timeSeconds` is not after the previous reading's is
 * ignored (`ignored: 'out-of-order'`). A reading with no pitch (`kind: 'none'`, or a non-finite or
 * non-positive `hz`) only advances time: a gap of more than `maxGapSeconds` since the last pitch clears
 * the detector and ends any plateau. Never throws on any reading.
 *
 * @param state - Detector state from {@link createPlateauState}; modified.
 * @param reading - The next reading.
 * @param options - Complete options from {@link resolvePlateauOptions} (not re-checked here, for speed).
 * @returns What changed.
 * @example
 * const s = createPlateauState();
 * const o = resolvePlateauOptions();
 * // Readings every 0.05 s from t = 0 at a steady 261.6 Hz, uncertainty 0.02 cent: the 11th (t = 0.5 s) settles it.
 * let u;
 * for (let k = 0; k <= 10; k++) u = pushReading(s, { ...reading, hz: 261.6, timeSeconds: k * 0.05 }, o);
 * u.settled?.startSeconds // 0
 */
export function pushReading(
  state: PlateauDetectorState,
  reading: PitchReading,
  options: PlateauOptions,
): PlateauUpdate {
  const t = typeof reading.timeSeconds === 'number' ? reading.timeSeconds + 0 : Number.NaN; // −0 → 0, as JSON would
  if (!Number.isFinite(t)) {
    return { settled: null, ended: null, gap: false, ignored: 'bad-time', status: statusOf(state, null) };
  }
  if (state.lastSeconds !== null && t <= state.lastSeconds) {
    return { settled: null, ended: null, gap: false, ignored: 'out-of-order', status: statusOf(state, null) };
  }
  state.lastSeconds = t;
  let ended: Plateau | null = null;
  let gap = false;
  if (state.lastOkSeconds !== null && t - state.lastOkSeconds > options.maxGapSeconds + TIME_EPS) {
    gap = true;
    if (state.open && state.anchorHz !== null) ended = snapshot(state.anchorHz, state.open);
    state.open = null;
    clearHeld(state);
  }
  if (!isUsablePitch(reading))
    return { settled: null, ended, gap, ignored: null, status: statusOf(state, null) };

  if (state.anchorHz === null) state.anchorHz = reading.hz;
  const c = 1200 * Math.log2(reading.hz / state.anchorHz);
  const u = reading.uncertaintyCents;
  state.lastOkSeconds = t;
  state.times.push(t);
  state.cents.push(c);
  state.sigmas.push(u);
  let drop = 0;
  while (drop < state.times.length - 1 && state.times[drop] < t - options.maxSettleSeconds - TIME_EPS) drop++;
  if (drop > 0) {
    state.times.splice(0, drop);
    state.cents.splice(0, drop);
    state.sigmas.splice(0, drop);
  }

  const p = state.open;
  if (p) {
    const band =
      Math.max(options.minHalfWidthCents, (options.sigmaMultiple * p.sumSigma) / p.count) +
      options.maxHalfWidthCents;
    if (Math.abs(c - p.meanCents) <= band) {
      p.outside = 0;
      p.count++;
      const d = c - p.meanCents;
      p.meanCents += d / p.count;
      p.m2 += d * (c - p.meanCents);
      p.sumSigma += u;
      p.endSeconds = t;
      p.recent.push(c);
      if (p.recent.length > options.maxMedianReadings)
        p.recent.splice(0, p.recent.length - options.maxMedianReadings);
      return { settled: null, ended, gap, ignored: null, status: statusOf(state, null) };
    }
    p.outside++;
    if (p.outside < OUTSIDE_TO_END) {
      return { settled: null, ended, gap, ignored: null, status: statusOf(state, null) };
    }
    ended = snapshot(state.anchorHz, p);
    state.open = null;
  }

  const ev = evaluate(state, options);
  let settled: Plateau | null = null;
  if (ev.settled) {
    const open: OpenPlateauState = {
      startSeconds: state.times[ev.stableStart],
      endSeconds: t,
      settledAtSeconds: t,
      count: 0,
      meanCents: 0,
      m2: 0,
      sumSigma: 0,
      recent: [],
      outside: 0,
      halfWidthCents: ev.halfWidth,
      groupSize: ev.groupSize,
    };
    for (let i = ev.stableStart; i < state.times.length; i++) {
      const x = state.cents[i];
      open.count++;
      const d = x - open.meanCents;
      open.meanCents += d / open.count;
      open.m2 += d * (x - open.meanCents);
      open.sumSigma += state.sigmas[i];
      open.recent.push(x);
    }
    if (open.recent.length > options.maxMedianReadings)
      open.recent.splice(0, open.recent.length - options.maxMedianReadings);
    state.open = open;
    settled = snapshot(state.anchorHz, open);
  }
  return { settled, ended, gap, ignored: null, status: statusOf(state, ev) };
}

/**
 * Closes the plateau in progress (end of a recording) and returns it, or null when none is open.
 * The held readings stay, so a later reading can continue the stream.
 *
 * @param state - Detector state; modified.
 * @example flushPlateau(createPlateauState()) // null
 */
export function flushPlateau(state: PlateauDetectorState): Plateau | null {
  const p = openPlateau(state);
  state.open = null;
  return p;
}

/** A live plateau detector: a small wrapper that owns a {@link PlateauDetectorState}. */
export interface PlateauDetector {
  /** Feeds one reading; see {@link pushReading}. */
  push(reading: PitchReading): PlateauUpdate;
  /** The plateau in progress, or null. */
  current(): Plateau | null;
  /** Ends the plateau in progress and returns it. */
  flush(): Plateau | null;
  /** Forgets everything. */
  reset(): void;
  /** The underlying JSON state (live: it changes as readings are pushed). */
  readonly state: PlateauDetectorState;
}

/**
 * Creates a live detector for a stream of readings (about 20 per second). Its state is allocated once and
 * updated in place; cost per reading is bounded by `maxSettleSeconds` worth of readings.
 *
 * @param options - Any subset of {@link PlateauOptions}.
 * @throws RangeError when an option is out of range (see {@link resolvePlateauOptions}).
 * @example
 * const d = createPlateauDetector({ settleSeconds: 0.5 });
 * for (const r of readings) { const u = d.push(r); if (u.settled) console.log(u.settled.meanHz); }
 */
export function createPlateauDetector(options: Partial<PlateauOptions> = {}): PlateauDetector {
  const o = resolvePlateauOptions(options);
  const state = createPlateauState();
  return {
    push: (r) => pushReading(state, r, o),
    current: () => openPlateau(state),
    flush: () => flushPlateau(state),
    reset: () => {
      clearHeld(state);
      state.open = null;
      state.lastSeconds = null;
    },
    state,
  };
}

/**
 * All plateaus in a recorded series of readings, in time order, using the same detector as live use.
 *
 * @param readings - Readings in time order (out-of-order ones are skipped).
 * @param options - Any subset of {@link PlateauOptions}.
 * @returns The plateaus; the last is closed at the end of the series.
 * @throws RangeError when an option is out of range.
 * @example
 * // readings: 2 s steady at 110 Hz, a glide, then 2 s steady at 220 Hz
 * findPlateaus(readings).map((p) => Math.round(p.medianHz)) // [110, 220]
 */
export function findPlateaus(
  readings: Iterable<PitchReading>,
  options: Partial<PlateauOptions> = {},
): Plateau[] {
  const d = createPlateauDetector(options);
  const out: Plateau[] = [];
  for (const r of readings) {
    const u = d.push(r);
    if (u.ended) out.push(u.ended);
  }
  const last = d.flush();
  if (last) out.push(last);
  return out;
}

/** The trend of the held readings over a span (see {@link trailingSlope}). */
export interface PitchSlope {
  /** Least-squares slope of pitch against time, cents per second. */
  readonly centsPerSecond: number;
  /** Its standard error from the residual scatter, cents per second. */
  readonly standardErrorCentsPerSecond: number;
  /** Readings that entered. */
  readonly count: number;
  /** Time span they cover, seconds. */
  readonly spanSeconds: Seconds;
}

/**
 * The pitch's trend over the held readings in [fromSeconds, toSeconds]: the ordinary least-squares slope
 * of cents against time and its standard error s/√Sxx from the residuals (NIST/SEMATECH e-Handbook of
 * Statistical Methods, §4.1.4.1; residual-based, so it does not trust the readings' own σ). Used to tell
 * whether a thermal tail has died out.
 *
 * @param state - A detector state.
 * @param fromSeconds - Span start, seconds.
 * @param toSeconds - Span end, seconds.
 * @returns The slope, or null with fewer than 5 readings in the span.
 * @example trailingSlope(state, t - 2, t)?.centsPerSecond // 0.003
 */
export function trailingSlope(
  state: PlateauDetectorState,
  fromSeconds: Seconds,
  toSeconds: Seconds,
): PitchSlope | null {
  const idx: number[] = [];
  for (let i = 0; i < state.times.length; i++) {
    const t = state.times[i];
    if (t >= fromSeconds - TIME_EPS && t <= toSeconds + TIME_EPS) idx.push(i);
  }
  let fit = lineFit(state, idx);
  if (!fit) return null;
  // A lone wild reading (the plateau tolerates one) must not pass for scatter or for creep: leave out
  // readings more than 5 robust standard deviations (1.4826·MAD) off the line, and fit again.
  const f0 = fit;
  const res = idx.map((i) => Math.abs(state.cents[i] - f0.cb - f0.b * (state.times[i] - f0.tb)));
  const sorted = res.slice().sort((a, b) => a - b);
  const sigma = 1.4826 * sorted[Math.floor(sorted.length / 2)];
  if (sigma > 0) {
    const kept = idx.filter((_, k) => res[k] <= 5 * sigma);
    if (kept.length < idx.length) fit = lineFit(state, kept) ?? fit;
  }
  return {
    centsPerSecond: fit.b,
    standardErrorCentsPerSecond: fit.se,
    count: fit.n,
    spanSeconds: fit.span,
  };
}

/** Ordinary least-squares line through the held readings at `idx`; null with fewer than 5. */
function lineFit(
  state: PlateauDetectorState,
  idx: readonly number[],
): { b: number; se: number; tb: number; cb: number; n: number; span: number } | null {
  const n = idx.length;
  if (n < 5) return null;
  // Sums of differences from the first reading: readings that do not move give exactly zero (no round-off
  // from large cents values), so a held pitch shows no creep at all.
  const c0 = state.cents[idx[0]];
  let st = 0;
  let sc = 0;
  for (const i of idx) {
    st += state.times[i];
    sc += state.cents[i] - c0;
  }
  const tb = st / n;
  const dc = sc / n;
  const cb = c0 + dc;
  let sxx = 0;
  let sxy = 0;
  for (const i of idx) {
    sxx += (state.times[i] - tb) ** 2;
    sxy += (state.times[i] - tb) * (state.cents[i] - c0 - dc);
  }
  if (!(sxx > 0)) return null;
  const b = sxy / sxx;
  let ss = 0;
  for (const i of idx) ss += (state.cents[i] - c0 - (cb - c0) - b * (state.times[i] - tb)) ** 2;
  const span = state.times[idx[n - 1]] - state.times[idx[0]];
  return { b, se: Math.sqrt(ss / (n - 2) / sxx), tb, cb, n, span };
}
