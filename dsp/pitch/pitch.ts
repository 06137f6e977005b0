/**
 * The pitch engine: a coarse estimate by the McLeod pitch method, an explicit octave check on the
 * spectrum, and a harmonic phase-slope refinement ({@link HarmonicRefiner}) that reaches hundredths of a
 * cent with an honest standard error.
 *
 * Coarse stage: P. McLeod and G. Wyvill, "A smarter way to find pitch", Proc. International Computer Music
 * Conference, 2005, through the `pitchy` package.
 * Octave check: harmonic-sieve tests on a Hann-windowed spectrum. The candidate f is divided by d ∈ {2, 3}
 * when the spectrum holds real energy at the multiples of f/d that are not multiples of f (a subharmonic
 * the coarse stage missed), and multiplied by d when the multiples of f not divisible by d are empty (the
 * coarse stage locked onto a subharmonic). A harmonic-sieve decision in the spirit of M. R. Schroeder,
 * "Period histogram and product spectrum", JASA 43(4), 1968.
 */

import FFT from 'fft.js';
import { PitchDetector } from 'pitchy';
import { conditionInto, levelOf, type ConditionStats } from './condition.ts';
import type { NoPitchReason, PitchReading, SignalLevel } from './reading.ts';
import {
  DOUBLE_ZERO,
  emptyRefineResult,
  HarmonicRefiner,
  HUM_LINES_HZ,
  type RefineResult,
} from './refine.ts';
import type { Decibels, Hertz, Seconds } from '../math/index.ts';

/** Lowest supported sample rate, Hz. */
export const MIN_SAMPLE_RATE_HZ = 8000;
/** Highest supported sample rate, Hz. */
export const MAX_SAMPLE_RATE_HZ = 384000;

const CENTS_PER_LN = 1200 / Math.LN2;
const NO_BREAKS = new Float64Array(0);
/**
 * A pitch this close under `minHz` (a hundredth of a cent) still counts as in range: a tone set exactly at
 * the floor (a 2 Hz LFO with `minHz: 2`) must not be refused for its last digit.
 */
const EDGE = 1 - 1e-5;

/**
 * Transforms and coarse detectors up to this size are shared by every estimator of the process (they hold
 * no state between calls, and all calls run on one thread); larger ones belong to their estimator, so that
 * their memory goes with it.
 */
const SHARED_MAX_SIZE = 1 << 17;
const sharedFfts = new Map<number, FFT>();
type Coarse = { det: PitchDetector<Float64Array>; buf: Float64Array };
const sharedDetectors = new Map<number, Coarse>();

/** Steps of the rotation in {@link applyHann} between exact values of the sine. */
const HANN_RESEED = 32;

/**
 * dst[i] = src[off + i]·w[i] for i < len, with the Hann window w[i] = sin²(π(i + ½)/len) (F. J. Harris,
 * Proc. IEEE 66(1), 1978). The sine is advanced by rotating (cos, sin) through π/len and recomputed exactly
 * every {@link HANN_RESEED} samples, so it stays within about 1e-15 of `Math.sin`; no window is stored, so
 * windows of any length cost neither memory nor a sine per sample.
 */
function applyHann(src: Float64Array, off: number, len: number, dst: Float64Array): void {
  const step = Math.PI / len;
  const cs = Math.cos(step);
  const sn = Math.sin(step);
  let c = 0;
  let s = 0;
  for (let i = 0; i < len; i++) {
    if (i % HANN_RESEED === 0) {
      c = Math.cos(step * (i + 0.5));
      s = Math.sin(step * (i + 0.5));
    } else {
      const s1 = s * cs + c * sn;
      c = c * cs - s * sn;
      s = s1;
    }
    dst[i] = src[off + i] * (s * s);
  }
}

/**
 * Runs a new coarse detector once over a tone in its own buffer and discards the answer. The detector keeps
 * nothing from one call to the next (every buffer is rewritten), so later answers are unchanged; the call
 * lets the JavaScript engine see every step of it before it compiles the hot loops, which otherwise, on
 * Node 20, can leave compiled code that is thrown away and re-entered on every later call. Once per
 * process is enough: the detectors of every size share the same code.
 */
let warmedUp = false;
function warmUp(coarse: Coarse): void {
  const b = coarse.buf;
  for (let i = 0; i < b.length; i++) b[i] = Math.sin(0.05 * i) + 0.5 * Math.sin(0.1 * i + 1);
  coarse.det.findPitch(b, 48000);
  // A short burst in silence, so that the normalisation runs out before the end of the lags too.
  b.fill(0);
  for (let i = 0; i < 64; i++) b[(b.length >> 1) + i] = Math.sin(0.3 * i);
  coarse.det.findPitch(b, 48000);
}

/**
 * What a window's estimate decided from its spectrum: the harmonics it fitted and the hum lines it handled.
 * Sub-windows of a settled measurement are fitted with the whole window's plan (dsp/pitch/settled.ts), so that
 * their scatter measures the oscillator, not the choices a short window's coarse spectrum would make.
 */
export interface HarmonicPlan {
  /** Harmonic numbers fitted, ascending. */
  readonly harmonics: Int32Array;
  /** Hum lines handled (bit h: HUM_LINES_HZ[h], dsp/pitch/refine.ts); 0 when the fit without hum handling was kept. */
  readonly humMask: number;
}

/** A reading made with a given {@link HarmonicPlan}: a frequency and its standard uncertainty, or why not. */
export type PlannedReading =
  | {
      readonly kind: 'ok';
      readonly hz: Hertz;
      readonly uncertaintyCents: number;
      /** Breaks the window spans (as for a {@link PitchReading}); absent when none. */
      readonly breaks?: number;
    }
  | { readonly kind: 'none'; readonly reason: NoPitchReason };

/** Options of the pitch estimator. All have defaults. */
export interface PitchOptions {
  /** Lowest fundamental to report, Hz. Default 10. */
  readonly minHz?: Hertz;
  /** Highest fundamental to report, Hz. Default 0.45 × sample rate, at most 20 kHz. */
  readonly maxHz?: Hertz;
  /** Time stamp to put on the reading, seconds. Default 0. */
  readonly timeSeconds?: Seconds;
  /** Windows quieter than this RMS level are `silent`, dBFS. Default −70. */
  readonly silenceDbfs?: Decibels;
  /** Fraction of samples at full scale above which a window is `clipped`. Default 0.01. */
  readonly clippedFractionLimit?: number;
  /** Most harmonics the refinement fits. Default 64. */
  readonly maxHarmonics?: number;
  /** Highest harmonic frequency used, as a fraction of the sample rate. Default 0.45. */
  readonly harmonicLimitFraction?: number;
  /** Segments per window in the phase fit (3 to 48). Default 16; live readings use fewer for speed. */
  readonly segments?: number;
  /** Use a spectrum no longer than the window (faster; for live readings). Default false. */
  readonly fastSpectrum?: boolean;
  /** A frequency the caller expects (the previous reading), Hz: shortens the coarse window. */
  readonly hintHz?: Hertz;
}

/** Throws a RangeError unless `fs` is a supported sample rate. */
export function checkSampleRate(fs: number): void {
  if (!Number.isFinite(fs) || fs < MIN_SAMPLE_RATE_HZ || fs > MAX_SAMPLE_RATE_HZ) {
    throw new RangeError(
      `sampleRateHz must be between ${MIN_SAMPLE_RATE_HZ} and ${MAX_SAMPLE_RATE_HZ} Hz, got ${fs}`,
    );
  }
}

function floorPow2(v: number): number {
  let p = 1;
  while (p * 2 <= v) p *= 2;
  return p;
}

function ceilPow2(v: number): number {
  let p = 1;
  while (p < v) p *= 2;
  return p;
}

interface Resolved {
  minHz: number;
  maxHz: number;
  silenceDbfs: number;
  clippedFractionLimit: number;
  maxHarmonics: number;
  harmonicLimitFraction: number;
  segments: number;
  fastSpectrum: boolean;
}

function resolve(fs: number, o: PitchOptions): Resolved {
  const minHz = o.minHz ?? 10;
  const maxHz = o.maxHz ?? Math.min(0.45 * fs, 20000);
  if (!(minHz > 0) || !(maxHz > minHz) || maxHz > fs / 2) {
    throw new RangeError(
      `minHz and maxHz must satisfy 0 < minHz < maxHz ≤ sampleRate/2 (${fs / 2} Hz), got ${minHz} and ${maxHz}`,
    );
  }
  const segments = o.segments ?? 16;
  if (!Number.isInteger(segments) || segments < 3 || segments > 48) {
    throw new RangeError(`segments must be an integer from 3 to 48, got ${segments}`);
  }
  const maxHarmonics = o.maxHarmonics ?? 64;
  if (!Number.isInteger(maxHarmonics) || maxHarmonics < 1 || maxHarmonics > 256) {
    throw new RangeError(`maxHarmonics must be an integer from 1 to 256, got ${maxHarmonics}`);
  }
  return {
    minHz,
    maxHz,
    silenceDbfs: o.silenceDbfs ?? -70,
    clippedFractionLimit: o.clippedFractionLimit ?? 0.01,
    maxHarmonics,
    harmonicLimitFraction: o.harmonicLimitFraction ?? 0.45,
    segments: o.segments ?? 16,
    fastSpectrum: o.fastSpectrum ?? false,
  };
}

/**
 * A reusable pitch estimator for windows up to `maxSamples` long at one sample rate. Buffers are allocated
 * once (the coarse detector and FFT for each power-of-two size on first use, shared by all estimators up
 * to 2¹⁷ points); after that an estimate allocates only the reading it returns, the small temporaries of
 * the `pitchy` call (the Hann window is applied on the fly, never stored).
 */
export class PitchEstimator {
  readonly sampleRateHz: number;
  readonly maxSamples: number;
  private readonly opts: Resolved;
  private readonly work: Float64Array;
  private readonly stats: ConditionStats = {
    badSamples: 0,
    peak: DOUBLE_ZERO,
    clippedFraction: DOUBLE_ZERO,
    rms: DOUBLE_ZERO,
  };
  private readonly refiner: HarmonicRefiner;
  private readonly refined: RefineResult = emptyRefineResult();
  /** The fit without hum handling, when the first one left a harmonic out for hum. */
  private readonly refinedNoHum: RefineResult = emptyRefineResult();
  private readonly detectors = new Map<number, Coarse>();
  private readonly ffts = new Map<number, FFT>();
  private readonly fftIn: Float64Array;
  private readonly fftOut: Float64Array;
  private readonly spec: Float64Array;
  private fftSize = 0;
  private readonly harmonics: Int32Array;
  private readonly noiseScratch = new Float64Array(64);
  // Set by chooseHarmonics before every use. Starts as NaN, a non-integer, so that the engine keeps the
  // field as a double from the start: a field that starts as 0 changes its storage when the first double
  // lands in it, and the other estimators' compiled code then fails its shape checks call after call.
  private noiseFloor = Number.NaN;
  /** The plan of the last window that gave a frequency (harmonics in `planHarmonics`), or none (count 0). */
  private readonly planHarmonics: Int32Array;
  private planCount = 0;
  private planHum = 0;

  /**
   * @param maxSamples - Longest window, samples (integer ≥ 64).
   * @param sampleRateHz - Sample rate, 8 kHz to 384 kHz.
   * @param options - Range and thresholds; see {@link PitchOptions}.
   * @throws RangeError for a sample rate or option outside its range.
   */
  constructor(maxSamples: number, sampleRateHz: number, options: PitchOptions = {}) {
    checkSampleRate(sampleRateHz);
    if (!Number.isInteger(maxSamples) || maxSamples < 64) {
      throw new RangeError(`maxSamples must be an integer ≥ 64, got ${maxSamples}`);
    }
    this.sampleRateHz = sampleRateHz;
    this.maxSamples = maxSamples;
    this.opts = resolve(sampleRateHz, options);
    this.work = new Float64Array(maxSamples);
    this.refiner = new HarmonicRefiner(maxSamples, this.opts.maxHarmonics, 48);
    const nfft = ceilPow2(maxSamples);
    this.fftIn = new Float64Array(nfft);
    this.fftOut = new Float64Array(2 * nfft);
    this.spec = new Float64Array(nfft / 2 + 1);
    this.harmonics = new Int32Array(this.opts.maxHarmonics);
    this.planHarmonics = new Int32Array(this.opts.maxHarmonics);
  }

  /**
   * Measures the fundamental of `count` samples of `src` starting at `start` (every `stride`-th sample, so
   * one channel of an interleaved buffer can be read in place). Never throws on the sample values: NaN,
   * infinities, silence, DC and clipping come back as typed `none` readings.
   *
   * @param src - Samples, nominally within ±1.
   * @param start - Index of the first sample (of the chosen channel) in `src`.
   * @param count - Window length, samples, ≤ maxSamples.
   * @param timeSeconds - Time stamp for the reading.
   * @param stride - Distance between consecutive samples in `src`. Default 1.
   * @param hintHz - Expected frequency (e.g. the previous reading), Hz, or 0 for none.
   */
  estimate(
    src: ArrayLike<number>,
    start: number,
    count: number,
    timeSeconds: Seconds = 0,
    stride = 1,
    hintHz: Hertz = 0,
  ): PitchReading {
    if (!Number.isInteger(count) || count < 0 || count > this.maxSamples) {
      throw new RangeError(`count must be an integer from 0 to ${this.maxSamples}, got ${count}`);
    }
    const fs = this.sampleRateHz;
    const o = this.opts;
    const st = this.stats;
    this.planCount = 0;
    conditionInto(src, start, count, this.work, st, stride);
    const level = levelOf(st);
    const none = (reason: NoPitchReason, coarseHz?: number): PitchReading => {
      // Breaks are given for one call only.
      this.refiner.setBreaks(NO_BREAKS, 0);
      return coarseHz === undefined
        ? { kind: 'none', reason, level, timeSeconds }
        : { kind: 'none', reason, level, timeSeconds, coarseHz };
    };
    const refused = this.refusal(count, level);
    if (refused !== null) return none(refused);

    // Coarse: McLeod pitch method on the central part of the window.
    const hint = hintHz > 0 ? hintHz : 0;
    // With a hint, 2.5 periods are enough for the NSDF peak; without one, 3 periods of the lowest pitch.
    const coarseWanted = hint > 0 ? (2.5 * fs) / hint : (3 * fs) / o.minHz;
    // Always a power of two, so the per-size detectors stay few (one per size, made on first use).
    const lc = Math.min(ceilPow2(Math.max(1024, coarseWanted)), floorPow2(count));
    const c0 = Math.floor((count - lc) / 2);
    const detectors = lc <= SHARED_MAX_SIZE ? sharedDetectors : this.detectors;
    let coarse = detectors.get(lc);
    if (!coarse) {
      // pitchy's detector takes inputs of exactly its own length: one detector and buffer per size.
      const det = PitchDetector.forFloat64Array(lc);
      det.clarityThreshold = 0.9;
      coarse = { det, buf: new Float64Array(lc) };
      if (!warmedUp) {
        warmUp(coarse);
        warmedUp = true;
      }
      detectors.set(lc, coarse);
    }
    const cb = coarse.buf;
    cb.set(this.work.subarray(c0, c0 + lc));
    let [mpmHz, clarity] = coarse.det.findPitch(cb, fs);
    // A clear period longer than the range allows from the centre: a dropout or two there can fool the
    // coarse stage (a 56 Hz saw with two 10 ms gaps 0.14 s apart read as 3.1 Hz, clarity 0.9995). The
    // window's first and last parts are tried too, and an in-range answer from either is taken.
    if (mpmHz > 0 && mpmHz < o.minHz * 0.97 && clarity >= 0.5 && count >= lc + lc / 4) {
      for (const s0 of [0, count - lc]) {
        cb.set(this.work.subarray(s0, s0 + lc));
        const [h, c] = coarse.det.findPitch(cb, fs);
        if (h >= o.minHz * 0.97 && c >= 0.5 && (mpmHz < o.minHz * 0.97 || c > clarity)) {
          mpmHz = h;
          clarity = c;
        }
      }
    }

    this.spectrum(count);
    const peakHz = this.strongestPeakHz();
    const mpmOk = mpmHz > 0 && clarity >= 0.5 && Number.isFinite(mpmHz);
    let f = mpmOk ? mpmHz : peakHz;
    if (!(f > 0)) return none('no-pitch');
    // Snap the coarse value onto the spectrum: the strongest peak is some harmonic k of the fundamental, so
    // the fundamental is peakHz/k for the k nearest the coarse value. This keeps the coarse stage's octave
    // decision while removing its few-tenths-of-a-percent error high up, so the sieve below lands on the
    // harmonics exactly.
    if (mpmOk && peakHz > 0) {
      const k = Math.max(1, Math.round(peakHz / mpmHz));
      const snapped = peakHz / k;
      if (Math.abs(snapped / mpmHz - 1) < 0.01) f = snapped;
    }
    // A fundamental far below the strongest peak must show some line of its own under that peak: the
    // coarse stage can lock onto a long, false period in a tone broken by dropouts.
    if (peakHz > 0 && peakHz / f >= 3.5 && !this.anyLineBelow(f, peakHz)) f = peakHz;
    f = this.octaveCheck(f);
    // The coarse value may be a few tenths of a percent off: the precise value below makes the call.
    if (f < o.minHz * 0.97) return none('below-range', f);
    if (f > o.maxHz) return none('above-range', f);
    const periods = (count * f) / fs;
    if (periods < 3) return none('below-range', f);
    f = this.peakInterpolatedHz(f);
    // A live hint within half a cent of the spectral estimate is the better centre for the phase fit: the
    // fit is most exact at its demodulation frequency, and a steady tone then needs one pass, not two.
    const hinted = hint > 0 && Math.abs(f / hint - 1) < 3e-4;
    if (hinted) f = hint;

    // Harmonics to fit, chosen from the spectrum.
    const kCount = this.chooseHarmonics(f, periods);
    if (kCount === 0) return none('no-pitch', f);
    const humMask = this.humPresent(f);
    let humUsed = humMask;
    const power = st.rms * st.rms;
    const pass = (centreHz: number) => this.fitAt(count, centreHz, kCount, power, humMask);
    let r = pass(f);
    // A fit that failed only for want of degrees of freedom may have started too far off: a centre a few cents
    // from the tone turns its phases by a ramp that, with breaks in the window, costs the robust fit too many
    // segments (a 103.76 Hz sine with three 20 ms dropouts, centred 2.8 cents high by a spectrum the dropouts
    // had bent, kept under one degree of freedom; centred within 0.7 cent it measures the tone). Fit once more
    // from where it got to, when that is within 1 %; the answer must then pass every check afresh.
    if (!r.ok && r.provisionalHz > 0 && Math.abs(r.provisionalHz / f - 1) < 0.01) {
      f = r.provisionalHz;
      r = pass(f);
    }
    if (!r.ok) return none('no-pitch', f);
    // A second pass centred on the first pass's answer, where the phase model is exact. Skipped only when
    // a hinted first pass landed within ~0.05 cent of its centre (its bias is a few per cent of that offset).
    if (!hinted || Math.abs(r.hz / f - 1) > 3e-5) pass(r.hz);
    // The harmonics left out as too close to a hum line tell ten times more about the frequency than the
    // ones fitted (information k²·power): the "hum" may be the tone's own skirt (a sine at
    // 177 Hz broken by a 2 ms dropout shows a line-like shoulder at 180 Hz; with its fundamental left out,
    // the fit read noise at the second harmonic, 5 cents off, stating ±0.9). The fit is made again without
    // hum handling, and taken instead when its own residuals give a standard error under a quarter of the
    // first fit's: the first fit then rests on noise (400–1500 times larger on such sines), while with real
    // hum the two stay within 1.5 of each other and the fit without hum handling carries the hum's beat
    // (a triangle at 58 Hz with 60 Hz hum at −30 dB; set on these cases, no published source).
    if (this.refined.ok && this.refined.humLeftOutShare > 10) {
      const alt = this.refiner.refine(
        this.work,
        count,
        fs,
        this.refined.hz,
        this.harmonics,
        kCount,
        power,
        this.refinedNoHum,
        o.segments,
        0,
      );
      if (alt.ok && 4 * alt.stdErrHz < this.refined.stdErrHz) {
        Object.assign(this.refined, alt);
        humUsed = 0;
      }
    }
    this.refiner.setBreaks(NO_BREAKS, 0);
    const res = this.refined;
    if (!res.ok) return none('no-pitch', f);
    if (res.explainedFraction < 0.3) return none('no-pitch', res.hz);
    if (res.hz < o.minHz * EDGE) return none('below-range', res.hz);
    if (res.hz > o.maxHz) return none('above-range', res.hz);
    this.planHarmonics.set(this.harmonics.subarray(0, kCount));
    this.planCount = kCount;
    this.planHum = humUsed;
    return {
      kind: 'ok',
      hz: res.hz,
      uncertaintyCents: (CENTS_PER_LN * res.stdErrHz) / res.hz,
      clarity: Math.max(0, Math.min(1, clarity)),
      level,
      windowSeconds: count / fs,
      harmonicsUsed: res.harmonicsUsed,
      timeSeconds,
      ...(res.breaks > 0 ? { breaks: res.breaks } : {}),
    };
  }

  /**
   * The plan of the last {@link estimate} call, when it gave a frequency: the harmonics it fitted and the hum
   * lines it handled (a copy). Null after a call that gave none.
   *
   * @example est.estimate(x, 0, x.length); est.lastPlan()?.harmonics.length // e.g. 24
   */
  lastPlan(): HarmonicPlan | null {
    if (this.planCount === 0) return null;
    return { harmonics: this.planHarmonics.slice(0, this.planCount), humMask: this.planHum };
  }

  /**
   * Measures `count` samples of `src` from `start` with a given plan, centred on `centreHz`: the same
   * conditioning and level checks as {@link estimate}, then the phase-slope fit of the plan's harmonics with
   * its hum handling, without a coarse stage or a spectrum of its own. For the sub-windows of a settled
   * measurement, whose whole window made the plan (dsp/pitch/settled.ts). Breaks given by {@link setBreaks}
   * apply to this call.
   *
   * @param centreHz - Where to centre the fit: the whole window's frequency, Hz (> 0).
   * @param plan - From {@link lastPlan}; harmonics above the estimator's limit are not fitted.
   * @throws RangeError for a count outside 0…maxSamples or a centre that is not a positive frequency.
   */
  estimateWithPlan(
    src: ArrayLike<number>,
    start: number,
    count: number,
    centreHz: Hertz,
    plan: HarmonicPlan,
  ): PlannedReading {
    if (!Number.isInteger(count) || count < 0 || count > this.maxSamples) {
      throw new RangeError(`count must be an integer from 0 to ${this.maxSamples}, got ${count}`);
    }
    if (!(centreHz > 0) || !Number.isFinite(centreHz)) {
      throw new RangeError(`centreHz must be a positive frequency, got ${centreHz}`);
    }
    const fs = this.sampleRateHz;
    const o = this.opts;
    const st = this.stats;
    this.planCount = 0;
    conditionInto(src, start, count, this.work, st, 1);
    const level = levelOf(st);
    const none = (reason: NoPitchReason): PlannedReading => {
      this.refiner.setBreaks(NO_BREAKS, 0);
      return { kind: 'none', reason };
    };
    const refused = this.refusal(count, level);
    if (refused !== null) return none(refused);
    if ((count * centreHz) / fs < 3) return none('below-range');
    const limit = this.harmonicLimitHz();
    let k = 0;
    for (let j = 0; j < plan.harmonics.length && k < this.harmonics.length; j++) {
      if (plan.harmonics[j] * centreHz < limit) this.harmonics[k++] = plan.harmonics[j];
    }
    if (k === 0) return none('no-pitch');
    const power = st.rms * st.rms;
    const pass = (hz: number) => this.fitAt(count, hz, k, power, plan.humMask);
    const r = pass(centreHz);
    if (r.ok && Math.abs(r.hz / centreHz - 1) > 3e-5) pass(r.hz);
    this.refiner.setBreaks(NO_BREAKS, 0);
    const res = this.refined;
    if (!res.ok || res.explainedFraction < 0.3) return { kind: 'none', reason: 'no-pitch' };
    if (res.hz < o.minHz * EDGE) return { kind: 'none', reason: 'below-range' };
    if (res.hz > o.maxHz) return { kind: 'none', reason: 'above-range' };
    return {
      kind: 'ok',
      hz: res.hz,
      uncertaintyCents: (CENTS_PER_LN * res.stdErrHz) / res.hz,
      ...(res.breaks > 0 ? { breaks: res.breaks } : {}),
    };
  }

  /**
   * Breaks in the signal for the next {@link estimate} call only (dropped blocks the capture reported), in
   * samples from its `start`. Each unbroken stretch gets its own phase in the fit (see
   * `HarmonicRefiner.setBreaks`). Breaks the data show are found without this. Allocation-free.
   *
   * @param positions - Break positions, samples from the window start.
   * @param count - How many entries to use (at most `MAX_BREAKS` = 8 are kept).
   */
  setBreaks(positions: ArrayLike<number>, count: number): void {
    this.refiner.setBreaks(positions, count);
  }

  /** Level of the last analysed window (for meters). */
  lastLevel(): SignalLevel {
    return levelOf(this.stats);
  }

  /** Why the conditioned window (`count` samples, at `level`) cannot be measured at all, or null. */
  private refusal(count: number, level: SignalLevel): NoPitchReason | null {
    const o = this.opts;
    const st = this.stats;
    if (st.badSamples > 0) return 'bad-samples';
    if (count < 64) return 'warming-up';
    if (!(level.rmsDbfs >= o.silenceDbfs)) return 'silent';
    if (st.clippedFraction > o.clippedFractionLimit) return 'clipped';
    return null;
  }

  /**
   * The phase-slope fit of the conditioned window (`count` samples in `work`) centred on `centreHz`, with the
   * first `harmonicCount` entries of `harmonics` and the hum lines of `humMask`, into `refined`.
   */
  private fitAt(
    count: number,
    centreHz: number,
    harmonicCount: number,
    power: number,
    humMask: number,
  ): RefineResult {
    return this.refiner.refine(
      this.work,
      count,
      this.sampleRateHz,
      centreHz,
      this.harmonics,
      harmonicCount,
      power,
      this.refined,
      this.opts.segments,
      humMask,
    );
  }

  /** Hann-windowed power spectrum of the conditioned window into `spec` (bins 0…nfft/2). */
  private spectrum(count: number): void {
    // The spectrum only guides the octave decision, the choice of harmonics and the hum check. Live
    // readings use the largest power of two inside the window (half the work, ≥ 5 cycles by construction);
    // settled measurements zero-pad to cover all of it.
    const fit = this.opts.fastSpectrum && count >= 128;
    const nfft = fit ? floorPow2(count) : ceilPow2(Math.max(count, 64));
    const len = fit ? nfft : count;
    const off = fit ? (count - nfft) >> 1 : 0;
    this.fftSize = nfft;
    const ffts = nfft <= SHARED_MAX_SIZE ? sharedFfts : this.ffts;
    let fft = ffts.get(nfft);
    if (!fft) {
      fft = new FFT(nfft);
      ffts.set(nfft, fft);
    }
    const inp = this.fftIn;
    applyHann(this.work, off, len, inp);
    for (let i = len; i < nfft; i++) inp[i] = 0;
    // fft.js reads the first `nfft` entries of the input and writes 2·nfft interleaved values.
    fft.realTransform(this.fftOut, inp);
    const out = this.fftOut;
    for (let b = 0; b <= nfft / 2; b++) {
      const re = out[2 * b];
      const im = out[2 * b + 1];
      this.spec[b] = re * re + im * im;
    }
  }

  /** Largest spectral power within ±1.5 bins of `hz` (0 outside the spectrum). */
  private powerAt(hz: number): number {
    const nfft = this.fftSize;
    const pos = (hz * nfft) / this.sampleRateHz;
    const lo = Math.max(1, Math.floor(pos - 1.5));
    const hi = Math.min(nfft / 2, Math.ceil(pos + 1.5));
    let p = 0;
    for (let b = lo; b <= hi; b++) if (this.spec[b] > p) p = this.spec[b];
    return p;
  }

  private strongestPeakHz(): number {
    const nfft = this.fftSize;
    const fs = this.sampleRateHz;
    const lo = Math.max(1, Math.floor((this.opts.minHz * nfft) / fs));
    const hi = Math.min(nfft / 2 - 1, Math.ceil((this.harmonicLimitHz() * nfft) / fs));
    let best = 0;
    let bi = -1;
    for (let b = lo; b <= hi; b++) {
      if (this.spec[b] > best) {
        best = this.spec[b];
        bi = b;
      }
    }
    if (bi < 2 || bi > nfft / 2 - 2) return bi > 0 ? (bi * fs) / nfft : 0;
    return ((bi + this.parabolicOffset(bi)) * fs) / nfft;
  }

  /** Offset of a spectral peak from bin `b`, by a parabola through the log power of bins b−1, b, b+1. */
  private parabolicOffset(b: number): number {
    const a = Math.log(this.spec[b - 1] + 1e-300);
    const c = Math.log(this.spec[b] + 1e-300);
    const e = Math.log(this.spec[b + 1] + 1e-300);
    const denom = a - 2 * c + e;
    const p = denom < 0 ? (0.5 * (a - e)) / denom : 0;
    return Math.abs(p) <= 1 ? p : 0;
  }

  private harmonicLimitHz(): number {
    return this.opts.harmonicLimitFraction * this.sampleRateHz;
  }

  /** Whether `hz` lies within two spectrum bins (at least 1 Hz) of a multiple of 50 or 60 Hz up to 360 Hz. */
  private nearMains(hz: number): boolean {
    if (hz > 365) return false;
    const tol = Math.max(1, (2 * this.sampleRateHz) / this.fftSize);
    for (const base of [50, 60]) {
      const j = Math.round(hz / base);
      if (j >= 1 && Math.abs(hz - j * base) <= tol) return true;
    }
    return false;
  }

  /**
   * Whether any multiple of `f` below `peakHz` (by more than 10 %) shows a line in the spectrum. The 10 %
   * keep out the peak's own skirt: a tone broken by dropouts close together smears its line over several
   * hertz (a 56 Hz saw with three 10 ms gaps in 0.15 s showed "lines" 5 Hz below its peak).
   */
  private anyLineBelow(f: number, peakHz: number): boolean {
    for (let m = 1; m * f < 0.9 * peakHz; m++) {
      const p = this.powerAt(m * f);
      if (p > 10 * this.sidePower(m * f)) return true;
    }
    return false;
  }

  /** Harmonic-sieve octave decision (see module comment). */
  private octaveCheck(f0: number): number {
    let f = f0;
    const limit = this.harmonicLimitHz();
    for (let iter = 0; iter < 8; iter++) {
      let changed = false;
      // Subharmonic present? Then the fundamental is f/d.
      for (const d of [2, 3]) {
        const sub = f / d;
        if (sub < this.opts.minHz) continue;
        let onF = 0;
        let between = 0;
        for (let m = 1; m * sub < limit && m <= 48; m++) {
          if (m % d === 0) onF += this.powerAt(m * sub);
          else if (!this.nearMains(m * sub)) between += this.powerAt(m * sub); // hum is no subharmonic
        }
        if (between > 0.1 * onF) {
          f = sub;
          changed = true;
          break;
        }
      }
      if (changed) continue;
      // Only every d-th harmonic present? Then the fundamental is d·f.
      for (const d of [2, 3]) {
        const up = f * d;
        if (up > this.opts.maxHz) continue;
        let onUp = 0;
        let off = 0;
        for (let m = 1; m * f < limit && m <= 48; m++) {
          const p = this.powerAt(m * f);
          if (m % d === 0) onUp += p;
          else off += p;
        }
        if (onUp > 0 && off < 0.01 * onUp) {
          f = up;
          changed = true;
          break;
        }
      }
      if (!changed) break;
    }
    return f;
  }

  /**
   * Refines f on the spectrum before the phase fit: the power-weighted mean of the Gaussian-interpolated
   * peak positions of the strongest harmonics, divided by their harmonic numbers (parabolic interpolation
   * of log power; J. O. Smith, "Spectral Audio Signal Processing", quadratic interpolation of spectral peaks).
   */
  private peakInterpolatedHz(f: number): number {
    const nfft = this.fftSize;
    const fs = this.sampleRateHz;
    const limit = this.harmonicLimitHz();
    let num = 0;
    let den = 0;
    for (let k = 1; k * f < limit && k <= 8; k++) {
      const pos = (k * f * nfft) / fs;
      // The coarse estimate may be a few tenths of a percent off high up: take the largest bin within ±2 %.
      const span = Math.max(2, Math.ceil(0.02 * pos));
      let b = -1;
      let pb = -1;
      for (
        let q = Math.max(2, Math.floor(pos) - span);
        q <= Math.min(nfft / 2 - 2, Math.ceil(pos) + span);
        q++
      ) {
        if (this.spec[q] > pb) {
          pb = this.spec[q];
          b = q;
        }
      }
      if (b < 2) continue;
      const hz = ((b + this.parabolicOffset(b)) * fs) / nfft / k;
      if (Math.abs(hz / f - 1) > 0.03) continue;
      const w = this.spec[b];
      num += w * hz;
      den += w;
    }
    return den > 0 ? num / den : f;
  }

  /**
   * Which mains hum lines ({@link HUM_LINES_HZ}) are present, as a bit mask. A line counts as measurable
   * where it lies at least three bins of this window's spectrum from every harmonic; it is present when its
   * power stands 20 dB over the noise floor. Hum comes as a family (50, 100, 150 Hz or 60, 120, 180 Hz),
   * so one present, measurable member marks its whole family, including members hidden under a harmonic.
   */
  private humPresent(f: number): number {
    const binHz = this.sampleRateHz / this.fftSize;
    let families = 0;
    for (let h = 0; h < HUM_LINES_HZ.length; h++) {
      const hz = HUM_LINES_HZ[h];
      const k = Math.max(1, Math.round(hz / f));
      let nearest = Math.abs(hz - k * f);
      if (k > 1) nearest = Math.min(nearest, Math.abs(hz - (k - 1) * f));
      nearest = Math.min(nearest, Math.abs(hz - (k + 1) * f));
      if (nearest < 3 * binHz) continue;
      // Beside it, on the side away from the nearest harmonic, the spectrum must fall well below it.
      const kn = Math.max(1, Math.round(hz / f));
      const p = this.powerAt(hz);
      if (this.noiseFloor > 0 && p > 100 * this.noiseFloor && p > 10 * this.sidePower(hz, hz - kn * f))
        families |= h < 3 ? 1 : 2;
    }
    return (families & 1 ? 0b000111 : 0) | (families & 2 ? 0b111000 : 0);
  }

  /**
   * The spectrum's largest power four to eight bins above `hz` (`side` > 0), below it (`side` < 0), or the
   * lesser of the two (`side` = 0). A line is a narrow peak (a Hann window's main lobe spans ±2 bins, ±2.7
   * when the window is zero-padded to the next power of two), so both sides lie far below it. The skirt
   * of a tone broken by dropouts is broad (rippled, so several bins are read) and falls only slowly with
   * distance: even the side away from the tone does not fall tenfold.
   *
   * @param hz - Where the line would be, Hz.
   * @param side - Which side to read: its sign only.
   */
  private sidePower(hz: number, side = 0): number {
    const pos = Math.round((hz * this.fftSize) / this.sampleRateHz);
    const top = this.fftSize / 2;
    let lo = 0;
    let hi = 0;
    for (let d = 4; d <= 8; d++) {
      lo = pos - d >= 1 ? Math.max(lo, this.spec[pos - d]) : Infinity;
      hi = pos + d <= top ? Math.max(hi, this.spec[pos + d]) : Infinity;
    }
    return side > 0 ? hi : side < 0 ? lo : Math.min(lo, hi);
  }

  /** Picks harmonics whose spectral peak stands clear of the noise floor; returns how many. */
  private chooseHarmonics(f: number, periods: number): number {
    const limit = this.harmonicLimitHz();
    // Noise floor: median power at points between harmonics.
    const ns = this.noiseScratch;
    let nn = 0;
    for (let k = 0; nn < ns.length - 3 && (k + 0.75) * f < limit; k++) {
      for (const frac of [0.25, 0.5, 0.75]) {
        if (k === 0 && frac === 0.25) continue;
        ns[nn++] = this.powerAt((k + frac) * f);
      }
    }
    let floor = 0;
    if (nn > 0) {
      // Insertion sort of at most 64 values, in place.
      for (let i = 1; i < nn; i++) {
        const v = ns[i];
        let j = i - 1;
        while (j >= 0 && ns[j] > v) {
          ns[j + 1] = ns[j];
          j--;
        }
        ns[j + 1] = v;
      }
      floor = ns[Math.floor(nn / 2)];
    }
    this.noiseFloor = floor;
    const segments = Math.max(3, Math.min(16, Math.floor(periods)));
    let pmax = 0;
    for (let k = 1; k * f < limit && k <= this.opts.maxHarmonics; k++)
      pmax = Math.max(pmax, this.powerAt(k * f));
    let count = 0;
    for (let k = 1; k * f < limit && count < this.opts.maxHarmonics; k++) {
      const p = this.powerAt(k * f);
      if (p >= 4 * segments * floor && p >= 1e-9 * pmax) this.harmonics[count++] = k;
    }
    if (count === 0 && pmax > 0) {
      // Keep at least the strongest one.
      for (let k = 1; k * f < limit && k <= this.opts.maxHarmonics; k++) {
        if (this.powerAt(k * f) === pmax) {
          this.harmonics[count++] = k;
          break;
        }
      }
    }
    return count;
  }
}

/**
 * Measures the fundamental of one buffer of mono samples (one-shot form of {@link PitchEstimator}).
 * Never throws on the sample values; throws a RangeError for a sample rate outside 8–384 kHz or bad options.
 *
 * @param samples - Mono samples, nominally within ±1; at least three periods of the tone.
 * @param sampleRateHz - Sample rate, Hz.
 * @param options - Range and thresholds.
 * @example
 * // one second of a 440 Hz sine at 48 kHz
 * estimatePitch(sine, 48000) // { kind: 'ok', hz: 440.0000…, uncertaintyCents: ~1e-6, … }
 */
export function estimatePitch(
  samples: Float32Array | Float64Array,
  sampleRateHz: number,
  options: PitchOptions = {},
): PitchReading {
  const est = new PitchEstimator(Math.max(64, samples.length), sampleRateHz, options);
  return est.estimate(samples, 0, samples.length, options.timeSeconds ?? 0, 1, options.hintHz ?? 0);
}
