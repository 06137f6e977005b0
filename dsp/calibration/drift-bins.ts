/**
 * The warm-up hold's readings, averaged into one-second bins for the drift analysis (`dsp/calibration/drift.ts`): a
 * hold lasts many minutes at ten or more readings a second, and the rate over a two-minute window needs
 * no more than one point a second. Bins average in cents against the first reading, so the mean is the
 * mean of pitch on the log scale (cents are `1200·log2(f1/f2)`, Ellis 1885).
 */
import type { DriftReading } from './drift.ts';
import { CENTS_PER_OCTAVE } from '../math/index.ts';
import type { Hertz, Seconds } from '../math/index.ts';

/** Length of one bin, seconds. */
export const DRIFT_BIN_SECONDS: Seconds = 1;

/**
 * Bins a hold's readings. `start` begins the hold (its first reading is the reference); `push` adds a
 * reading and returns the bin it closed, if any.
 *
 * @example
 * const b = new DriftBinner(); b.start(0, 440); b.push(0.5, 440); b.push(1, 440.01) // { timeSeconds: 0.5, hz: 440.005… }
 */
export class DriftBinner {
  /** Stream time the hold started, seconds; null before `start`. */
  private startedAtSeconds: Seconds | null = null;
  private refHz: Hertz = 1;
  private binStart: Seconds = 0;
  private binSumCents = 0;
  private binCount = 0;
  private readonly bins: DriftReading[] = [];

  /** True once the hold has started. */
  get started(): boolean {
    return this.startedAtSeconds !== null;
  }

  /** The closed bins, seconds since the hold started, in order. */
  get readings(): readonly DriftReading[] {
    return this.bins;
  }

  /**
   * Starts the hold at a reading.
   *
   * @param timeSeconds - Its stream time, s.
   * @param hz - Its pitch, Hz, > 0 (the reference of the bins' cents).
   */
  start(timeSeconds: Seconds, hz: Hertz): void {
    if (!(hz > 0) || !Number.isFinite(hz)) throw new RangeError(`hz must be a finite number > 0, got ${hz}`);
    this.startedAtSeconds = timeSeconds;
    this.binStart = timeSeconds;
    this.refHz = hz;
  }

  /**
   * Adds a reading of the hold (ignored before `start`).
   *
   * @param timeSeconds - Its stream time, s, not before the previous one.
   * @param hz - Its pitch, Hz, > 0.
   * @returns The bin this reading closed (its middle, seconds since the start, and its mean pitch), or null.
   */
  push(timeSeconds: Seconds, hz: Hertz): DriftReading | null {
    if (this.startedAtSeconds === null) return null;
    this.binSumCents += CENTS_PER_OCTAVE * Math.log2(hz / this.refHz);
    this.binCount++;
    if (timeSeconds - this.binStart < DRIFT_BIN_SECONDS) return null;
    const cents = this.binSumCents / this.binCount;
    const mid = (this.binStart + timeSeconds) / 2;
    const bin = {
      timeSeconds: mid - this.startedAtSeconds,
      hz: this.refHz * Math.pow(2, cents / CENTS_PER_OCTAVE),
    };
    this.bins.push(bin);
    this.binStart = timeSeconds;
    this.binSumCents = 0;
    this.binCount = 0;
    return bin;
  }
}
