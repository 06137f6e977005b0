import type { Cents, Decibels, Hertz, Seconds } from '../math/index.ts';

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

/**
 * Why a reading or a captured step deserves a second look. Flags never change a number; they say what it
 * has been through.
 *
 * - `spans-break`: the window contains a break in the signal (a dropped block reported by the capture, or
 *   a phase jump found in the data). Each unbroken stretch was fitted with its own phase, so the break costs
 *   a little precision but does not bias the frequency.
 * - `still-settling`: the step was captured on a timeout while the pitch was still creeping measurably;
 *   the residual creep is in the step's `settlingCents`.
 * - `suspect-voltage`: the step is inconsistent with the tracking model (its voltage is probably wrong).
 * - `outside-tolerance-unknown`: the uncertainty is too large to tell whether the step is within tolerance.
 */
export type StepFlag = 'spans-break' | 'still-settling' | 'suspect-voltage' | 'outside-tolerance-unknown';

/**
 * The parts of a measurement's standard uncertainty, cents (JCGM 100:2008 §5.1.2: uncorrelated inputs
 * combine as the root-sum-square).
 */
export interface UncertaintyComponents {
  /** The estimator's own standard error over the window (phase-fit residuals), cents. */
  readonly estimatorCents: number;
  /** The oscillator's short-term wander over the window (scatter of sub-window estimates), cents. */
  readonly repeatabilityCents: number;
  /** Residual creep of a settling pitch inside the window, cents (0 when settled). */
  readonly settlingCents: number;
  /** Effective degrees of freedom of the Type A part (Welch–Satterthwaite, GUM G.4); Infinity if unknown. */
  readonly dof: number;
}

/**
 * Root-sum-square of the three components, cents (JCGM 100:2008 eq. 10 with unit sensitivities).
 *
 * @example combinedCents({ estimatorCents: 3, repeatabilityCents: 4, settlingCents: 0, dof: Infinity }) // 5
 */
export function combinedCents(c: UncertaintyComponents): number {
  return Math.sqrt(
    c.estimatorCents * c.estimatorCents +
      c.repeatabilityCents * c.repeatabilityCents +
      c.settlingCents * c.settlingCents,
  );
}

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
  /** Breaks in the signal inside the window (reported or found in the data); absent when none. */
  readonly breaks?: number;
  /**
   * The parts of `uncertaintyCents`, for settled averages (`PitchTracker.averageOfSpan`,
   * {@link UncertaintyComponents}); absent on live readings.
   */
  readonly components?: UncertaintyComponents;
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
