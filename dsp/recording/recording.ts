/**
 * Analysis of a whole recording of a calibration pass: an oscillator stepped through reference voltages
 * and recorded through the sound card, read back as one channel of samples.
 *
 * ## Steps
 * 1. **Live pass.** The streaming tracker (`PitchTracker`, via `dsp/recording/recording-input.ts`) runs over the samples at a modest reading
 *    rate with few harmonics: cheap, and exactly what the live view would have shown.
 * 2. **Plateaus.** The readings go through the plateau detector (`dsp/calibration/plateau.ts`), whose band is sized to
 *    the readings' own uncertainty (3σ, at most ±0.3 cent) and which needs `settleSeconds` inside the band:
 *    glides and overshoots shorter than that are never plateaus, a slow thermal tail settles once its creep
 *    fits the band, and a gap in the readings (silence, a pulled cable) ends a plateau; a live window more
 *    than half silent (5 ms blocks below −70 dBFS) counts as no reading, so that the tracker's long window
 *    after a silence cannot bridge it. Two neighbouring
 *    plateaus within {@link SAME_STEP_CENTS} of each other, with no silence between, are one step broken by a
 *    disturbance (a click, a nudged knob); the later piece is measured, as the setting the hand left.
 * 3. **Precise measurement.** Each step is measured once by {@link PitchEstimator} over its settled span as
 *    one window, reading the samples in place: from `settleSeconds` after the plateau settled (its first
 *    in-band reading) to a reading interval before its last in-band reading (a margin against the next
 *    glide), capped at `maxWindowSeconds` centred on the span. The live readings are stamped with the
 *    moment they were made for the detector (evenly spaced), and mapped back to their windows' centres,
 *    where the pitch they report was heard, to place the window.
 * 4. **Mapping and calibration.** Steps are mapped to `points` in order. The error table
 *    (`dsp/calibration/table.ts`), the tracking fit and its bend analysis (`dsp/model/fit.ts`) and the trim advice
 *    (`dsp/advice/advice.ts`) follow.
 *
 * At 1 V/oct a volt is an octave, 1200 cents, and cents are `1200·log2(f1/f2)` (A. J. Ellis, 1885; the
 * 1 V/oct scale as in docs/facts.md, "The 1 V/oct scale": a semitone is 83.333 mV). Every expected non-answer (silence, no
 * pitch, no plateau, a plateau count that does not match the points) is a typed
 * {@link RecordingAnalysisError}; only misuse (bad options) throws.
 */
import { MAX_CLOCK_PPM } from '../io/index.ts';
import type { BendAnalysisOk, TrackingFitOk } from '../model/index.ts';
import { A4_HZ, CENTS_PER_OCTAVE, nearestNote, type NearestNote } from '../math/index.ts';
import { combinedCents, PitchEstimator } from '../pitch/index.ts';
import type { BudgetOptions } from '../model/index.ts';
import {
  calibrate,
  checkCalibrationOptions,
  fitThermalTail,
  type CapturedStep,
} from '../calibration/index.ts';
import { MAX_CONTROL_VOLTS as MAX_VOLTS } from '../calibration/index.ts';
import {
  findPlateaus,
  resolvePlateauOptions,
  type Plateau,
  type PlateauOptions,
} from '../calibration/index.ts';
import type { PitchOk, PitchReading, StepFlag, UncertaintyComponents } from '../pitch/index.ts';
import type { CalibrationResult } from '../calibration/index.ts';
import { measureSettled } from '../pitch/index.ts';
import type { InputNetwork, TrimAdvice } from '../advice/index.ts';
import {
  arraySource,
  describeNoSignal,
  livePass,
  monotoneProgress,
  type SampleSource,
} from './recording-input.ts';
import type { ErrorTable } from '../calibration/index.ts';
import type { Cents, Hertz, Ppm, Seconds, Volts } from '../math/index.ts';

/**
 * Neighbouring plateaus closer than this, cents, with no silence between them, are one step broken by a
 * disturbance. A semitone step is 100 cents; a millivolt at 1 V/oct is 1.2 cents (docs/facts.md), so a nudge
 * of a few millivolts merges and any planned step stays apart (common practice, no source).
 */
export const SAME_STEP_CENTS: Cents = 5;

/** Shortest settled span measured as a window, seconds; shorter steps use their live readings. */
const MIN_WINDOW_SECONDS: Seconds = 0.1;
/** …and the fewest periods of the tone it must hold. */
const MIN_WINDOW_PERIODS = 20;
/**
 * Margin kept from either edge of a settled span, seconds (at least one reading interval). The next live
 * reading, one interval later, was already out of the band, so the next glide began within about one
 * interval of the span's end.
 */
const EDGE_MARGIN_SECONDS: Seconds = 0.1;
/** Lowest pitch a recording is measured at, Hz (LFO cores; MIDI note 0 is 8.18 Hz). */
export const RECORDING_LOWEST_HZ: Hertz = 2;
/** Below this the precise windows use their own estimator (the default estimator's floor, dsp/pitch/pitch.ts), Hz. */
const SUB_AUDIO_ESTIMATOR_HZ: Hertz = 10;
/** Fewest periods a sub-audio step's window holds (20 would need 10 s of a 2 Hz step). */
const MIN_WINDOW_PERIODS_SUB_AUDIO = 10;
/** Shortest stretch the plateau detector is asked to see settle, seconds (even with `settleSeconds` 0). */
const MIN_DETECT_SECONDS: Seconds = 0.25;
/** Plateaus listed by name in a count-mismatch message before "…". */
const MAX_LISTED = 12;

export { fitAndAdvise, type CalibrationOptions } from '../calibration/index.ts';

/** Options of {@link analyzeRecording}. All optional. */
export interface RecordingOptions {
  /**
   * Control voltages of the steps, V, in the order they were played, each finite within ±12 V (at least
   * one). Omitted: the recording is one steady tone of unknown voltage.
   */
  readonly points?: readonly Volts[];
  /**
   * Voltages read at the input jack with a meter, V, one per point (null where none was read); the table
   * and fit use them in place of the nominal points. Needs `points`, same length.
   */
  readonly measuredVolts?: readonly (Volts | null)[];
  /** Time the pitch must stay in the band to count as settled, seconds, 0…60. Default 0.5. */
  readonly settleSeconds?: Seconds;
  /** Tuning reference for note names, Hz, 380…500. Default 440 (ISO 16:1975). */
  readonly a4Hz?: Hertz;
  /**
   * Error of the interface's clock, ppm (positive = fast), within ±1000; every frequency is corrected by
   * `·(1 + ppm·10⁻⁶)` (`dsp/io/clock.ts`). Default 0.
   */
  readonly clockPpm?: Ppm;
  /**
   * Lowest control voltage the tracking fit, the bend analysis and the advice use, V (inclusive), within
   * ±12. Default: no limit. The error table keeps every step.
   */
  readonly fitFromVolts?: Volts;
  /** Highest control voltage they use, V (inclusive), within ±12, not below `fitFromVolts`. Default: no limit. */
  readonly fitToVolts?: Volts;
  /**
   * The input network the scale trimmer acts on (`dsp/advice/advice.ts` {@link InputNetwork}); with it the scale
   * advice carries resistor values that would correct the scale, with the nearest E24 and E96 values.
   */
  readonly network?: InputNetwork;
  /** The voltage the scale trimmer turns about, V, when known (see `CalibrationOptions`). Default: unknown. */
  readonly scalePivotVolts?: Volts;
  /** Meter, source accuracy, clock uncertainty and temperature for the uncertainty budget (`dsp/model/budget.ts`). */
  readonly budget?: BudgetOptions;
  /** Tolerance over the range in use, cents, > 0 (`dsp/model/tolerance.ts`). Default 1. */
  readonly toleranceCents?: Cents;
  /** Plateaus spanning less than this, seconds, are ignored; ≥ 0. Default `settleSeconds`. */
  readonly minPlateauSeconds?: Seconds;
  /** Longest precise window per step, seconds, 0.25…30; longer steps are measured over their centre. Default 4. */
  readonly maxWindowSeconds?: Seconds;
  /** Readings per second of the live pass, 2…50. Default 10. */
  readonly readingsPerSecond?: number;
  /** Harmonics fitted per live reading, 1…64. Default 8 (the live pass reads a decimated copy, so more harmonics cost little). */
  readonly liveHarmonics?: number;
  /** Harmonics fitted in a precise window, 1…64. Default 24. */
  readonly windowHarmonics?: number;
  /** Periods of the tone a live window holds (longer windows low down), 3…1000. Default 20. */
  readonly liveMinCycles?: number;
  /** Shortest live window, seconds, 0.05…1. Default 0.1. */
  readonly liveMinWindowSeconds?: Seconds;
  /**
   * Let the live pass read the recording decimated to about 24 kHz (faster; the steps are
   * still measured at the file's own rate). Default true; see `livePass`.
   */
  readonly decimateLivePass?: boolean;
  /** Further plateau-detector settings (its `settleSeconds` comes from the option above). */
  readonly plateau?: Partial<Omit<PlateauOptions, 'settleSeconds'>>;
}

/**
 * Where a settled step lies in the recording: from its first to its last in-band live reading (the
 * centres of their windows), seconds from the first sample.
 */
export interface PlateauSpan {
  readonly startSeconds: Seconds;
  readonly endSeconds: Seconds;
  /** Mean pitch of its live readings, Hz. */
  readonly meanHz: Hertz;
}

/** One measured step. */
export interface RecordingStep {
  /** Position in the recording, 0-based. */
  readonly index: number;
  /** Nominal control voltage, V; null for a single tone of unknown voltage. */
  readonly volts: Volts | null;
  /** The meter reading at the input jack, V, or null when none was given. */
  readonly measuredVolts: Volts | null;
  /** Measured frequency, Hz (clock-corrected). */
  readonly hz: Hertz;
  /** Standard uncertainty of `hz`, cents (1σ, JCGM 100:2008): the root-sum-square of `components`. */
  readonly uncertaintyCents: Cents;
  /** What the step went through (`spans-break`: the window held a break); empty when all is well. */
  readonly flags: StepFlag[];
  /** The parts of `uncertaintyCents`, cents (estimator, the oscillator's repeatability, settling). */
  readonly components: UncertaintyComponents;
  /** Nearest 12-TET note at `a4Hz`, middle C = C4. */
  readonly note: NearestNote;
  /** Error from the ideal 1 V/oct line through the first step, cents (0 for the first); null without volts. */
  readonly centsFromIdeal: Cents | null;
  /** Its standard uncertainty, cents; null without volts. */
  readonly centsFromIdealUncertainty: Cents | null;
  /** Interval to the previous step minus 1200 cents per volt; null for the first step or without volts. */
  readonly intervalErrorCents: Cents | null;
  /** Its standard uncertainty, cents; null where the interval error is null. */
  readonly intervalUncertaintyCents: Cents | null;
  /** The settled span: centres of its first and last in-band live readings, seconds. */
  readonly startSeconds: Seconds;
  readonly endSeconds: Seconds;
  /** The window measured, seconds. */
  readonly windowStartSeconds: Seconds;
  readonly windowEndSeconds: Seconds;
  /** `window`: one precise window; `readings`: the step was too short, so the mean of its live readings. */
  readonly source: 'window' | 'readings';
  /** The precise reading (frequency not clock-corrected), or null when `source` is `readings`. */
  readonly reading: PitchOk | null;
  /** The plateau as the detector reported it. */
  readonly plateau: Plateau;
}

/** A completed analysis. */
export interface RecordingAnalysisOk {
  readonly kind: 'ok';
  readonly sampleRateHz: Hertz;
  readonly durationSeconds: Seconds;
  readonly a4Hz: Hertz;
  readonly settleSeconds: Seconds;
  readonly clockPpm: Ppm;
  /** Steps in recording order. */
  readonly steps: readonly RecordingStep[];
  /** The error table; null without points. */
  readonly table: ErrorTable | null;
  /** Weighted least-squares fit over every step; null with fewer than two steps at distinct voltages. */
  readonly fit: TrackingFitOk | null;
  /** Trusted middle and end bends; null when no fit. */
  readonly bends: BendAnalysisOk | null;
  /** Trim advice; null without points. */
  readonly advice: TrimAdvice | null;
  /** The one result (`dsp/calibration/result.ts`): what `analyze --json`, the JSON export and a saved run hold. */
  readonly result: CalibrationResult;
  /** Live readings made. */
  readonly readingCount: number;
}

/**
 * Why a recording gave no analysis:
 * - `silence`: no signal above the silence floor anywhere;
 * - `clipped`: the signal is there but clipped wherever it is loud enough;
 * - `no-pitch`: signal but no measurable pitch (noise, a chord);
 * - `no-plateaus`: a pitch, but it never settled for `settleSeconds`;
 * - `too-short`: the recording is shorter than one settled step;
 * - `plateau-count-mismatch`: the number of settled steps differs from the number of points.
 */
export type RecordingErrorCode =
  'silence' | 'clipped' | 'no-pitch' | 'no-plateaus' | 'too-short' | 'plateau-count-mismatch';

/** An expected non-answer, with a one-line message for a person. */
export interface RecordingAnalysisError {
  readonly kind: 'error';
  readonly code: RecordingErrorCode;
  readonly message: string;
  /** The settled steps that were found (for `plateau-count-mismatch`; empty otherwise). */
  readonly plateaus: readonly PlateauSpan[];
  /** How many points were given (0 without points). */
  readonly expected: number;
}

/** Outcome of {@link analyzeRecording}. */
export type RecordingAnalysis = RecordingAnalysisOk | RecordingAnalysisError;

function checkNumber(name: string, v: unknown, lo: number, hi: number, integer = false): number {
  if (typeof v !== 'number' || !Number.isFinite(v) || v < lo || v > hi || (integer && !Number.isInteger(v))) {
    throw new RangeError(
      `${name} must be ${integer ? 'an integer' : 'a finite number'} from ${lo} to ${hi}, got ${String(v)}`,
    );
  }
  return v;
}

/**
 * The spans as a short list for a message: `0.0–2.9 s, 3.1–6.0 s, …` (at most 12 listed).
 *
 * @param spans - Plateau spans in time order.
 * @example describePlateauSpans([{ startSeconds: 0, endSeconds: 2.94, meanHz: 55 }]) // '0.0–2.9 s'
 */
export function describePlateauSpans(spans: readonly PlateauSpan[]): string {
  const listed = spans
    .slice(0, MAX_LISTED)
    .map((s) => `${s.startSeconds.toFixed(1)}–${s.endSeconds.toFixed(1)} s`);
  if (spans.length > MAX_LISTED) listed.push('…');
  return listed.join(', ');
}

function plural(n: number, word: string): string {
  return `${n} ${word}${n === 1 ? '' : 's'}`;
}

function fail(
  code: RecordingErrorCode,
  message: string,
  expected: number,
  plateaus: readonly PlateauSpan[] = [],
): RecordingAnalysisError {
  return { kind: 'error', code, message, plateaus, expected };
}

interface Piece {
  readonly plateau: Plateau;
  /** Times of its first and last in-band readings, seconds. */
  readonly startSeconds: Seconds;
  readonly endSeconds: Seconds;
  /** Window candidates, seconds. */
  readonly windowStart: Seconds;
  readonly windowEnd: Seconds;
}

interface Group {
  readonly pieces: Piece[];
}

/**
 * Analyses a recorded calibration pass: finds the settled steps in order, measures each precisely, maps
 * them to `points` and builds the error table, the tracking fit with its bends, and the trim advice.
 * Pure and synchronous; allocates the tracker and one estimator for the longest window. With one settled
 * step and no points it reports that tone (volts null), as a single-tone measurement; with several and no
 * points it reports them all with volts null (no table, fit or advice).
 *
 * @param samples - One channel, nominally within ±1, at least a few periods long: in memory, or a
 *   {@link SampleSource} read a block at a time (`dsp/recording/recording-input.ts`), so any length fits in bounded
 *   memory.
 * @param sampleRateHz - Sample rate, 8 kHz to 384 kHz.
 * @param opts - See {@link RecordingOptions}.
 * @returns The analysis, or a typed {@link RecordingAnalysisError}.
 * @throws RangeError for an option out of range (the message names it, its value and the range), or
 *   `measuredVolts` without `points` or of another length.
 * @example
 * // A perfect 1 V/oct saw at 55·2^V Hz held 2 s at each of 0…4 V (dsp/sim/simulate.ts):
 * analyzeRecording(rec.samples, 48000, { points: [0, 1, 2, 3, 4] })
 * // { kind: 'ok', steps: [{ volts: 0, hz: 55.0000…, … }, …], fit: { octavesPerVolt: 1.00000…, … }, … }
 */
export function analyzeRecording(
  samples: Float32Array | SampleSource,
  sampleRateHz: Hertz,
  opts: RecordingOptions = {},
  onProgress?: (fraction: number) => void,
): RecordingAnalysis {
  // ---- Options -------------------------------------------------------------------------------------
  const fs = sampleRateHz;
  const points = opts.points;
  if (points !== undefined) {
    if (!Array.isArray(points) || points.length === 0) {
      throw new RangeError(`points must be a non-empty array of volts, got ${String(points)}`);
    }
    points.forEach((v, i) => checkNumber(`points[${i}]`, v, -MAX_VOLTS, MAX_VOLTS));
  }
  const measured = opts.measuredVolts;
  if (measured !== undefined) {
    if (points === undefined)
      throw new RangeError('measuredVolts needs points: give the nominal voltages too');
    if (!Array.isArray(measured) || measured.length !== points.length) {
      throw new RangeError(
        `measuredVolts must have one entry per point (${points.length}), got ${Array.isArray(measured) ? measured.length : String(measured)}`,
      );
    }
    measured.forEach((v, i) => {
      if (v !== null) checkNumber(`measuredVolts[${i}]`, v, -MAX_VOLTS, MAX_VOLTS);
    });
  }
  const settle = checkNumber('settleSeconds', opts.settleSeconds ?? 0.5, 0, 60);
  const a4Hz = checkNumber('a4Hz', opts.a4Hz ?? A4_HZ, 380, 500);
  const clockPpm = checkNumber('clockPpm', opts.clockPpm ?? 0, -MAX_CLOCK_PPM, MAX_CLOCK_PPM);
  const calibration = checkCalibrationOptions(opts);
  const minPlateau = checkNumber('minPlateauSeconds', opts.minPlateauSeconds ?? settle, 0, 3600);
  const cap = checkNumber('maxWindowSeconds', opts.maxWindowSeconds ?? 4, 0.25, 30);
  const rps = checkNumber('readingsPerSecond', opts.readingsPerSecond ?? 10, 2, 50);
  const liveHarmonics = checkNumber('liveHarmonics', opts.liveHarmonics ?? 8, 1, 64, true);
  const windowHarmonics = checkNumber('windowHarmonics', opts.windowHarmonics ?? 24, 1, 64, true);
  const liveMinCycles = checkNumber('liveMinCycles', opts.liveMinCycles ?? 20, 3, 1000);
  const liveMinWindow = checkNumber('liveMinWindowSeconds', opts.liveMinWindowSeconds ?? 0.1, 0.05, 1);
  const detectSettle = Math.max(settle, MIN_DETECT_SECONDS);
  const plateauOptions = resolvePlateauOptions({
    // The detector looks back at least twice the settle time (noisy readings are averaged in groups).
    maxSettleSeconds: Math.min(120, Math.max(10, 2 * detectSettle)),
    ...opts.plateau,
    settleSeconds: detectSettle,
  });
  const source = samples instanceof Float32Array ? arraySource(samples, fs) : samples;
  if (typeof source !== 'object' || source === null || typeof source.read !== 'function') {
    throw new RangeError(`samples must be a Float32Array or a SampleSource, got ${String(samples)}`);
  }
  const expected = points?.length ?? 0;
  const durationSeconds = source.frameCount / fs;

  // ---- 1. Live pass (dsp/recording/recording-input.ts: blocks → tracker → readings, silent windows marked) --------
  const liveOptions = {
    readingsPerSecond: rps,
    liveHarmonics,
    minCycles: liveMinCycles,
    minWindowSeconds: liveMinWindow,
    decimate: opts.decimateLivePass ?? true,
  };
  // A recording with stretches below the live windows' reach (a second or more of 'below-range'
  // readings) is read again following pitches down to RECORDING_LOWEST_HZ; others keep the one pass. The
  // first pass stops as soon as it has seen that second, and the progress bar carries on from there.
  const bar = monotoneProgress(onProgress);
  let pass = livePass(source, { ...liveOptions, stopAfterBelowRange: rps }, bar.pass());
  if (pass.stoppedBelowRange === true) {
    pass = livePass(source, { ...liveOptions, lowestHz: RECORDING_LOWEST_HZ }, bar.pass());
  }
  if (!pass.anySignal) {
    return fail('silence', 'silence: every sample of the recording is 0 (nothing was recorded)', expected);
  }
  const { readings, centreAt } = pass;
  if (durationSeconds < plateauOptions.settleSeconds + 0.2) {
    return fail(
      'too-short',
      `too short: the recording lasts ${durationSeconds.toFixed(2)} s, less than one settled step ` +
        `(${plateauOptions.settleSeconds} s to settle plus a window to measure)`,
      expected,
    );
  }
  let ok = 0;
  let silent = 0;
  let clipped = 0;
  let loudest = -Infinity;
  for (const r of readings) {
    if (r.kind === 'ok') ok++;
    else if (r.reason === 'silent') silent++;
    else if (r.reason === 'clipped') clipped++;
    if (r.level.rmsDbfs > loudest) loudest = r.level.rmsDbfs;
  }
  if (ok === 0) {
    if (silent === readings.length) {
      const dc = describeNoSignal(pass, loudest);
      if (dc !== null) return fail('silence', dc, expected);
      return fail(
        'silence',
        `silence: the recording is too quiet to measure anywhere (loudest ${loudest.toFixed(1)} dBFS RMS)`,
        expected,
      );
    }
    if (clipped > 0) {
      return fail(
        'clipped',
        'clipped: wherever the signal is loud enough it is clipped; record again with less level into the interface',
        expected,
      );
    }
    return fail(
      'no-pitch',
      'no pitch: the signal is not periodic enough to measure anywhere (noise, a chord, or a pitch that never holds still?)',
      expected,
    );
  }

  // ---- 2. Plateaus -------------------------------------------------------------------------------------
  const okTimes = readings.filter((r) => r.kind === 'ok').map((r) => r.timeSeconds);
  const plateaus = findPlateaus(readings, plateauOptions).filter(
    (p) => p.endSeconds - p.startSeconds >= minPlateau - 1e-9,
  );
  if (plateaus.length === 0) {
    return fail(
      'no-plateaus',
      `no settled steps: the pitch never stayed within ±${plateauOptions.maxHalfWidthCents} cent for ` +
        `${plateauOptions.settleSeconds} s; hold each voltage longer, or check the patch for a wobbling pitch`,
      expected,
    );
  }
  const edge = Math.max(EDGE_MARGIN_SECONDS, 1 / rps);
  const pieces: Piece[] = plateaus.map((p) => {
    const start = centreAt.get(p.startSeconds) ?? p.startSeconds;
    const end = centreAt.get(p.endSeconds) ?? p.endSeconds;
    return {
      plateau: p,
      startSeconds: start,
      endSeconds: end,
      windowStart: start + Math.max(settle, edge),
      windowEnd: end - edge,
    };
  });
  const groups: Group[] = [];
  for (const piece of pieces) {
    const last = groups.at(-1)?.pieces.at(-1);
    if (
      last &&
      Math.abs(CENTS_PER_OCTAVE * Math.log2(piece.plateau.meanHz / last.plateau.meanHz)) < SAME_STEP_CENTS &&
      !silenceBetween(
        okTimes,
        last.plateau.endSeconds,
        piece.plateau.startSeconds,
        plateauOptions.maxGapSeconds,
      )
    ) {
      groups.at(-1)!.pieces.push(piece);
    } else {
      groups.push({ pieces: [piece] });
    }
  }
  const spans: PlateauSpan[] = groups.map((g) => ({
    startSeconds: g.pieces[0].startSeconds,
    endSeconds: g.pieces[g.pieces.length - 1].endSeconds,
    meanHz: g.pieces[g.pieces.length - 1].plateau.meanHz,
  }));
  if (points !== undefined && groups.length !== points.length) {
    return fail(
      'plateau-count-mismatch',
      `found ${plural(groups.length, 'plateau')} (at ${describePlateauSpans(spans)}) but ` +
        `${plural(points.length, 'voltage')} ${points.length === 1 ? 'was' : 'were'} given`,
      expected,
      spans,
    );
  }

  // ---- 3. Precise measurement -----------------------------------------------------------------------
  const estimator = new PitchEstimator(Math.max(64, Math.round(cap * fs)), fs, {
    maxHarmonics: windowHarmonics,
  });
  let windowSamples = new Float32Array(estimator.maxSamples);
  // Sub-audio steps: an estimator reaching down to RECORDING_LOWEST_HZ with windows of ten periods, made
  // only when a recording has such a step (5 s of audio at 2 Hz, at the file's own rate).
  let lowEstimator: PitchEstimator | null = null;
  const measuredSteps = groups.map((g, index) => {
    const piece = choosePiece(g.pieces, fs);
    const p = piece.plateau;
    let [w0, w1] = windowOf(piece, fs);
    let reading: PitchOk | null = null;
    const subAudio = p.meanHz < SUB_AUDIO_ESTIMATOR_HZ;
    // Ten periods by the plateau's mean pitch, with 1 % to spare: the mean is read from the live pass and may sit
    // a hair above the pitch the window then holds.
    const capHere = subAudio ? Math.max(cap, (1.01 * MIN_WINDOW_PERIODS_SUB_AUDIO) / p.meanHz) : cap;
    if (w1 - w0 >= minWindowSeconds(p.meanHz)) {
      // The last settled part of the plateau: any creep left after the step has had longest to die out.
      if (w1 - w0 > capHere) w0 = w1 - capHere;
      let est = estimator;
      if (subAudio) {
        const lowSamples = Math.round((MIN_WINDOW_PERIODS_SUB_AUDIO / RECORDING_LOWEST_HZ) * fs);
        lowEstimator ??= new PitchEstimator(Math.max(estimator.maxSamples, lowSamples), fs, {
          maxHarmonics: windowHarmonics,
          minHz: RECORDING_LOWEST_HZ,
        });
        est = lowEstimator;
        if (windowSamples.length < est.maxSamples) windowSamples = new Float32Array(est.maxSamples);
      }
      const s0 = Math.max(0, Math.round(w0 * fs));
      const want = Math.min(source.frameCount - s0, Math.round((w1 - w0) * fs), est.maxSamples);
      const n = source.read(s0, windowSamples.subarray(0, Math.max(0, want)));
      const r = measureSettled(est, windowSamples, 0, n, (s0 + n / 2) / fs);
      // A window that disagrees with its own live readings by more than the band has caught something the
      // readings did not (a click at the edge): keep the readings' mean instead.
      if (
        r.kind === 'ok' &&
        Math.abs(CENTS_PER_OCTAVE * Math.log2(r.hz / p.meanHz)) <= 3 * p.halfWidthCents + 3 * p.spreadCents
      ) {
        reading = r;
        w0 = s0 / fs;
        w1 = (s0 + n) / fs;
      }
    }
    const flags = (reading && (reading.breaks ?? 0) > 0 ? ['spans-break'] : []) as StepFlag[];
    let components = (reading?.components ?? {
      estimatorCents: reading ? reading.uncertaintyCents : p.standardErrorCents,
      repeatabilityCents: 0,
      settlingCents: 0,
      dof: Infinity,
    }) as UncertaintyComponents;
    // The creep left in the window, as in a live run (settledEnough, dsp/calibration/run.ts).
    const creep = reading ? tailLeft(readings, centreAt, p, w0, w1) : null;
    if (creep) {
      components = { ...components, settlingCents: creep.settlingCents };
      if (creep.stillSettling) flags.push('still-settling');
    }
    return {
      index,
      piece,
      group: g,
      rawHz: reading ? reading.hz : p.meanHz,
      uncertaintyCents: reading ? combinedCents(components) : p.standardErrorCents,
      reading,
      windowStartSeconds: reading ? w0 : piece.startSeconds,
      windowEndSeconds: reading ? w1 : piece.endSeconds,
      flags,
      components,
    };
  });

  // ---- 4. Mapping, then the one pipeline: clock, table, fit, advice (dsp/calibration/pipeline.ts) ----------------
  const captured: CapturedStep[] = measuredSteps.map((m, i) => ({
    index: i,
    volts: points === undefined ? null : points[i],
    measuredVolts: measured?.[i] ?? null,
    rawHz: m.rawHz,
    uncertaintyCents: m.uncertaintyCents,
    flags: m.flags,
    components: m.components,
    capture: {
      source: m.reading ? 'window' : 'readings',
      startSeconds: m.group.pieces[0].startSeconds,
      endSeconds: m.group.pieces[m.group.pieces.length - 1].endSeconds,
      windowStartSeconds: m.windowStartSeconds,
      windowEndSeconds: m.windowEndSeconds,
      harmonicsUsed: m.reading ? m.reading.harmonicsUsed : null,
      clarity: m.reading ? m.reading.clarity : null,
      rmsDbfs: m.reading ? m.reading.level.rmsDbfs : null,
      peakDbfs: m.reading ? m.reading.level.peakDbfs : null,
    },
  }));
  const cal = calibrate(captured, {
    ...calibration,
    a4Hz,
    clockPpm,
    ...(opts.budget === undefined ? {} : { budget: opts.budget }),
    ...(opts.toleranceCents === undefined ? {} : { toleranceCents: opts.toleranceCents }),
  });

  const steps: RecordingStep[] = measuredSteps.map((m, i) => {
    const r = cal.result.steps[i];
    const first = m.group.pieces[0];
    const lastPiece = m.group.pieces[m.group.pieces.length - 1];
    return {
      index: i,
      volts: r.volts,
      measuredVolts: r.measuredVolts,
      hz: r.hz,
      uncertaintyCents: r.uncertaintyCents,
      flags: m.flags,
      components: m.components,
      note: nearestNote(r.hz, a4Hz),
      centsFromIdeal: r.centsFromIdeal,
      centsFromIdealUncertainty: r.centsFromIdealUncertainty,
      intervalErrorCents: r.intervalErrorCents,
      intervalUncertaintyCents: r.intervalUncertaintyCents,
      startSeconds: first.startSeconds,
      endSeconds: lastPiece.endSeconds,
      windowStartSeconds: m.windowStartSeconds,
      windowEndSeconds: m.windowEndSeconds,
      source: m.reading ? 'window' : 'readings',
      reading: m.reading,
      plateau: m.piece.plateau,
    };
  });
  return {
    kind: 'ok',
    sampleRateHz: fs,
    durationSeconds,
    a4Hz,
    settleSeconds: settle,
    clockPpm,
    steps,
    table: cal.table,
    fit: cal.fit.kind === 'ok' ? cal.fit : null,
    bends: cal.bends.kind === 'ok' ? cal.bends : null,
    advice: points === undefined ? null : cal.advice,
    result: cal.result,
    readingCount: readings.length,
  };
}

/** Shortest window worth measuring at this pitch, seconds. */
function minWindowSeconds(hz: Hertz): Seconds {
  const periods = hz < SUB_AUDIO_ESTIMATOR_HZ ? MIN_WINDOW_PERIODS_SUB_AUDIO : MIN_WINDOW_PERIODS;
  return Math.max(MIN_WINDOW_SECONDS, periods / hz);
}

/** Longest thermal tail allowed for, seconds (the run's default `creepHorizonSeconds`). */
const TAIL_TAU_MAX_SECONDS = 3.5;
/** Creep a window may still hold and not be flagged `still-settling`, cents (the run's default `settleLimitCents`). */
const TAIL_LIMIT_CENTS = 0.01;
/** The tail fit looks back at most this far before the window, seconds. */
const TAIL_LOOKBACK_SECONDS = 10;
/** Readings whose uncertainty is over this many times the median of their plateau are left out of the tail fit. */
const UNCERTAIN_READING_FACTOR = 5;

/**
 * The creep a step's window [w0, w1] may still hold: an exponential tail fitted to the plateau's live
 * readings (at their windows' centres) over up to {@link TAIL_LOOKBACK_SECONDS} before the window
 * (`fitThermalTail`, dsp/calibration/tail.ts; the exponential settling model, common practice, no source).
 * Its bound B enters as a rectangular term B/√3 (JCGM 100:2008 §4.3.7); a tail the fit resolves whose
 * bound exceeds {@link TAIL_LIMIT_CENTS} flags the step `still-settling`. Null with too few readings.
 */
function tailLeft(
  readings: readonly PitchReading[],
  centreAt: ReadonlyMap<number, number>,
  p: Plateau,
  w0: Seconds,
  w1: Seconds,
): { settlingCents: Cents; stillSettling: boolean } | null {
  const times: number[] = [];
  const cents: number[] = [];
  const sigmas: number[] = [];
  const inPlateau: PitchOk[] = [];
  for (const r of readings) {
    if (r.kind !== 'ok' || r.timeSeconds < p.startSeconds - 1e-9 || r.timeSeconds > p.endSeconds + 1e-9)
      continue;
    const tc = centreAt.get(r.timeSeconds) ?? r.timeSeconds;
    if (tc < w0 - TAIL_LOOKBACK_SECONDS || tc > w1 + 1e-9) continue;
    inPlateau.push(r);
    sigmas.push(r.uncertaintyCents);
  }
  // A reading far less certain than its neighbours (a window still holding the glide) says nothing about a
  // creep of hundredths of a cent, and as the first point of an unweighted fit it would set the tail's
  // start: leave it out.
  sigmas.sort((a, b) => a - b);
  const limit = sigmas.length > 0 ? UNCERTAIN_READING_FACTOR * sigmas[sigmas.length >> 1] : Infinity;
  for (const r of inPlateau) {
    if (!(r.uncertaintyCents <= limit)) continue;
    times.push(centreAt.get(r.timeSeconds) ?? r.timeSeconds);
    cents.push(CENTS_PER_OCTAVE * Math.log2(r.hz / p.meanHz));
  }
  if (times.length === 0) return null;
  const fit = fitThermalTail(times, cents, times[0], w1, w0, w1, TAIL_TAU_MAX_SECONDS);
  if (!fit) return null;
  return {
    settlingCents: fit.residualBoundCents / Math.sqrt(3),
    stillSettling: fit.resolved && fit.residualBoundCents > TAIL_LIMIT_CENTS,
  };
}

/** The precise window of a piece: after the settle time, or its whole settled stretch when that is too short. */
function windowOf(piece: Piece, fs: Hertz): [Seconds, Seconds] {
  const end = Math.min(piece.windowEnd, piece.endSeconds);
  const start = piece.windowStart;
  if (end - start >= minWindowSeconds(piece.plateau.meanHz)) return [start, end];
  return [Math.min(piece.startSeconds + EDGE_MARGIN_SECONDS, end - 1 / fs), end];
}

/**
 * The piece of a step to measure: the last one (the setting the hand left), unless its window is shorter
 * than a second and than the longest piece's, then the longest.
 */
function choosePiece(pieces: readonly Piece[], fs: Hertz): Piece {
  const length = (p: Piece) => {
    const [a, b] = windowOf(p, fs);
    return b - a;
  };
  const last = pieces[pieces.length - 1];
  let longest = last;
  for (const p of pieces) if (length(p) > length(longest)) longest = p;
  return length(last) >= Math.min(1, length(longest)) ? last : longest;
}

/** True when the pitched readings between two times have a gap longer than `maxGap` (silence, lost signal). */
function silenceBetween(okTimes: readonly number[], from: Seconds, to: Seconds, maxGap: Seconds): boolean {
  let prev = from;
  // Binary search for the first reading after `from`.
  let lo = 0;
  let hi = okTimes.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (okTimes[mid] <= from) lo = mid + 1;
    else hi = mid;
  }
  for (let i = lo; i < okTimes.length && okTimes[i] <= to; i++) {
    if (okTimes[i] - prev > maxGap + 1e-9) return true;
    prev = okTimes[i];
  }
  return to - prev > maxGap + 1e-9;
}
