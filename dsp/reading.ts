import type { Cents, Decibels, Hertz, Seconds } from './units.ts';

/**
 * Why a pitch reading carries no frequency.
 *
 * - `silent`: the level is below the measurable floor.
 * - `clipped`: too many samples sit at full scale for a trustworthy reading.
 * - `no-pitch`: signal present but not periodic enough (noise, chords, glides).
 * - `below-range` / `above-range`: a pitch exists but lies outside what this window and sample rate can measure.
 * - `warming-up`: not enough cycles have arrived yet for the window this frequency needs.
 * - `bad-samples`: the block held NaN or infinite values (they are replaced by zeros and the window restarts).
 */
export type NoPitchReason =
  'silent' | 'clipped' | 'no-pitch' | 'below-range' | 'above-range' | 'warming-up' | 'bad-samples';

/** Signal level of the analysed window. */
export interface SignalLevel {
  /** RMS level after DC removal, dBFS (−Infinity for digital silence). */
  readonly rmsDbfs: Decibels;
  /** Peak absolute sample value of the raw input, dBFS. */
  readonly peakDbfs: Decibels;
  /** Fraction of samples at or above the clip threshold (0…1). */
  readonly clippedFraction: number;
}

/** A successful pitch reading. */
export interface PitchOk {
  readonly kind: 'ok';
  /** Estimated fundamental frequency, Hz. */
  readonly hz: Hertz;
  /** Standard uncertainty (one standard error) of `hz`, expressed in cents. */
  readonly uncertaintyCents: Cents;
  /** McLeod clarity of the coarse estimate, 0…1 (1 = perfectly periodic). */
  readonly clarity: number;
  /** Level of the window. */
  readonly level: SignalLevel;
  /** Length of the analysed window, seconds. */
  readonly windowSeconds: Seconds;
  /** Number of harmonics that entered the refinement. */
  readonly harmonicsUsed: number;
  /**
   * When the reading was made, seconds since the stream started: the end of its window, so stamps rise
   * evenly whatever the window length (the window's centre is `timeSeconds − windowSeconds/2`). A one-shot
   * analysis carries the time stamp its caller gave (default 0).
   */
  readonly timeSeconds: Seconds;
}

/** A reading that carries no frequency, with the typed reason. */
export interface PitchNone {
  readonly kind: 'none';
  readonly reason: NoPitchReason;
  /** Level of the window, when one could be measured. */
  readonly level: SignalLevel;
  /** When the reading was made, seconds since the stream started (the end of its window). */
  readonly timeSeconds: Seconds;
  /** A coarse frequency, when one was found but rejected (for example above the range). */
  readonly coarseHz?: Hertz;
}

/** The outcome of one pitch measurement. */
export type PitchReading = PitchOk | PitchNone;
