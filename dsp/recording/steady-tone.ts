/**
 * One held tone of any length, reported as what it is: a pitch that may move. The tone is read once in
 * blocks through the live tracker (`dsp/recording/recording-input.ts`), and its readings go through the drift analysis
 * (`dsp/calibration/drift.ts`): the least-squares line through them gives the pitch at the start and the end, the drift
 * rate and their uncertainties (widened for the readings' correlation), and the trailing-window rate says
 * whether the oscillator has settled (0.1 cent per minute over two minutes, docs/facts.md common practice).
 *
 * A tone whose drift is within its own uncertainty is steady: one number describes it. A tone that moved
 * more than that, or one longer than {@link LONG_TONE_SECONDS}, is reported with its start, end and rate,
 * never as one frequency with a tiny σ.
 *
 * Pure: no Node or DOM APIs.
 */
import { analyzeDrift, driftTrend, type DriftResult, type DriftTrend } from '../calibration/index.ts';
import { describeNoSignal, livePass, type SampleSource } from './recording-input.ts';
import type { Cents, Seconds } from '../math/index.ts';

/** A tone longer than this, seconds, is always reported as a moving pitch (start, end, rate). */
export const LONG_TONE_SECONDS: Seconds = 60;
/** A drift smaller than this, cents, is not called moving even when significant (the display's resolution is 0.01). */
export const MIN_MOVING_CENTS: Cents = 0.05;
/** Coverage factor for "the tone moved": drift beyond k standard uncertainties (JCGM 100:2008 §6.2, k = 2). */
const COVERAGE_K = 2;

/** A held tone measured through its readings. */
export interface SteadyToneOk {
  readonly kind: 'ok';
  /** True when the tone moved (drift beyond 2σ and 0.05 cent) or lasts longer than {@link LONG_TONE_SECONDS}. */
  readonly moving: boolean;
  /** The straight line through the readings: start, end, mean, rate, each with its uncertainty. */
  readonly trend: DriftTrend;
  /** Warm-up status over two-minute trailing windows (`analyzeDrift`; `none` for a tone shorter than that). */
  readonly drift: DriftResult;
  /** Length of the recording, seconds. */
  readonly durationSeconds: Seconds;
  /** Live readings made, and how many of them carried a pitch. */
  readonly readingCount: number;
  readonly pitchedCount: number;
}

/** Why a held tone gave no answer (the codes of `dsp/recording/recording.ts`). */
export interface SteadyToneError {
  readonly kind: 'error';
  readonly code: 'silence' | 'clipped' | 'no-pitch';
  /** One line for a person. */
  readonly message: string;
}

/** Options of {@link analyzeSteadyTone}. */
export interface SteadyToneOptions {
  /** Readings per second of the live pass, 2…50. Default 10, or 2 beyond {@link LONG_TONE_SECONDS} (ample for drift). */
  readonly readingsPerSecond?: number;
  /** Called after each block with the fraction read, 0…1. */
  readonly onProgress?: (fraction: number) => void;
}

/**
 * Measures one held tone of any length through its live readings and the drift analysis.
 *
 * @param source - One channel (`dsp/recording/recording-input.ts`), any length.
 * @param opts - Reading rate and a progress callback.
 * @returns The tone (moving or steady) or a typed error for silence, a DC level, clipping or no pitch.
 * @throws RangeError for a reading rate out of range.
 * @example
 * // An hour of a 440 Hz tone rising 1.65 cents:
 * analyzeSteadyTone(source) // { kind: 'ok', moving: true, trend: { startHz: 440.0…, driftCents: 1.65…, … }, … }
 */
export function analyzeSteadyTone(
  source: SampleSource,
  opts: SteadyToneOptions = {},
): SteadyToneOk | SteadyToneError {
  const long = source.frameCount / source.sampleRateHz > LONG_TONE_SECONDS;
  const rps = opts.readingsPerSecond ?? (long ? 2 : 10);
  if (!Number.isFinite(rps) || rps < 2 || rps > 50) {
    throw new RangeError(`readingsPerSecond must be a finite number from 2 to 50, got ${rps}`);
  }
  const pass = livePass(
    source,
    // A long tone is read at 2 per second over windows nearly that long, so little audio goes unheard.
    { readingsPerSecond: rps, liveHarmonics: 8, minCycles: 20, minWindowSeconds: Math.min(0.45, 0.9 / rps) },
    opts.onProgress,
  );
  let loudest = -Infinity;
  let clipped = 0;
  let silent = 0;
  const points: { timeSeconds: number; hz: number; uncertaintyCents: number }[] = [];
  for (const r of pass.readings) {
    if (r.level.rmsDbfs > loudest) loudest = r.level.rmsDbfs;
    if (r.kind === 'ok') {
      // Stamped at the window's centre, where the pitch was heard; kept strictly increasing.
      const t = pass.centreAt.get(r.timeSeconds) ?? r.timeSeconds;
      if (points.length === 0 || t > points[points.length - 1].timeSeconds) {
        points.push({ timeSeconds: t, hz: r.hz, uncertaintyCents: r.uncertaintyCents });
      }
    } else if (r.reason === 'silent') silent++;
    else if (r.reason === 'clipped') clipped++;
  }
  const durationSeconds = source.frameCount / source.sampleRateHz;
  const noSignal = describeNoSignal(pass, loudest);
  if (noSignal !== null && points.length === 0) return { kind: 'error', code: 'silence', message: noSignal };
  const trend = points.length >= 4 ? driftTrend(points) : null;
  if (trend === null || trend.kind !== 'ok') {
    if (pass.readings.length > 0 && silent === pass.readings.length) {
      return {
        kind: 'error',
        code: 'silence',
        message: `silence: the recording is too quiet to measure anywhere (loudest ${loudest.toFixed(1)} dBFS RMS)`,
      };
    }
    if (clipped > 0 && points.length === 0) {
      return {
        kind: 'error',
        code: 'clipped',
        message:
          'clipped: wherever the signal is loud enough it is clipped; record again with less level into the interface',
      };
    }
    return {
      kind: 'error',
      code: 'no-pitch',
      message:
        points.length === 0
          ? 'no pitch: the signal is not periodic enough to measure anywhere (noise, a chord?)'
          : `no pitch: only ${points.length} readings held a pitch, too few to follow it`,
    };
  }
  const moving =
    durationSeconds > LONG_TONE_SECONDS ||
    (Math.abs(trend.driftCents) > COVERAGE_K * trend.driftUncertaintyCents &&
      Math.abs(trend.driftCents) > MIN_MOVING_CENTS);
  return {
    kind: 'ok',
    moving,
    trend,
    drift: analyzeDrift(points),
    durationSeconds,
    readingCount: pass.readings.length,
    pitchedCount: points.length,
  };
}
