/**
 * The scale pair check's pairing: while the user switches a control voltage between two values, each settled
 * plateau is assigned to the low or the high side, so that the interval error (`scalePairIntervalError`,
 * `dsp/advice/advice.ts`) can be shown live while the scale trimmer is turned. Pure functions of plain data.
 */
import { scalePairIntervalError, type ScalePairResult } from '../advice/index.ts';
import { CENTS_PER_OCTAVE } from '../math/index.ts';
import type { Cents, Hertz, Seconds, Volts } from '../math/index.ts';

/**
 * Two plateaus closer than this are the same side of the check, cents: a quarter of an octave, far more
 * than the trimmer moves a side and far less than any useful pair of voltages (common practice, no source).
 */
export const SAME_SIDE_CENTS: Cents = 300;

/** One side of the pair: the pitch of its latest plateau and when that plateau began. */
export interface ScalePairSideState {
  readonly hz: Hertz;
  readonly startSeconds: Seconds;
}

/** Both sides as they stand (low is the lower pitch once both are known). */
export interface ScalePairPairing {
  readonly low: ScalePairSideState | null;
  readonly high: ScalePairSideState | null;
}

/** No side heard yet. */
export const EMPTY_PAIRING: ScalePairPairing = Object.freeze({ low: null, high: null });

/**
 * Assigns a settled plateau to a side: the side within {@link SAME_SIDE_CENTS} of it (the trimmer moved
 * it), else an empty side, else the side heard longer ago (the user chose a new voltage). The lower pitch
 * is always `low`.
 *
 * @param pairing - The sides so far.
 * @param plateau - The plateau heard now: its mean pitch, Hz, and its start, seconds.
 * @example pairPlateau(EMPTY_PAIRING, { hz: 130, startSeconds: 2 }) // { low: { hz: 130, startSeconds: 2 }, high: null }
 */
export function pairPlateau(pairing: ScalePairPairing, plateau: ScalePairSideState): ScalePairPairing {
  let { low, high } = pairing;
  const near = (side: ScalePairSideState | null) =>
    side !== null && Math.abs(CENTS_PER_OCTAVE * Math.log2(plateau.hz / side.hz)) < SAME_SIDE_CENTS;
  if (near(low)) low = plateau;
  else if (near(high)) high = plateau;
  else if (low === null) low = plateau;
  else if (high === null) high = plateau;
  else if (low.startSeconds < high.startSeconds) low = plateau;
  else high = plateau;
  if (low && high && low.hz > high.hz) [low, high] = [high, low];
  return { low, high };
}

/** The voltages and tolerance of the check. */
export interface ScalePairSettings {
  readonly voltsLow: Volts;
  readonly voltsHigh: Volts;
  readonly toleranceCents: Cents;
}

/**
 * The interval error of the pair, once both sides are heard; null before, or when the settings are not a
 * valid check (the Setup shows why).
 *
 * @param pairing - The sides.
 * @param settings - Voltages and tolerance.
 * @example pairingResult({ low: { hz: 130, startSeconds: 0 }, high: { hz: 519.04, startSeconds: 3 } }, { voltsLow: 1, voltsHigh: 3, toleranceCents: 1 })?.direction // 'widen'
 */
export function pairingResult(
  pairing: ScalePairPairing,
  settings: ScalePairSettings,
): ScalePairResult | null {
  if (!pairing.low || !pairing.high) return null;
  try {
    return scalePairIntervalError(
      pairing.low.hz,
      pairing.high.hz,
      settings.voltsLow,
      settings.voltsHigh,
      settings.toleranceCents,
    );
  } catch {
    return null;
  }
}

/**
 * The scale pair's unexpected-pitch guard, cents: an interval further than this from the pair's nominal
 * interval (1200 cents per volt) is not a trimming error but a wrong or stale voltage, and gives no
 * instruction. The same margin as the run's default pitch tolerance (dsp/calibration/run.ts DEFAULT_RUN_OPTIONS);
 * common practice, no source.
 */
export const PAIR_GUARD_CENTS: Cents = 150;

/** Two sides heard whose interval is too far from the nominal one to be the pair. */
export interface UnexpectedInterval {
  /** Interval between the heard sides, cents. */
  readonly measuredCents: Cents;
  /** Nominal interval of the pair, 1200 cents per volt, cents. */
  readonly expectedCents: Cents;
}

/** The pair's verdict: an interval error, or the guard's reason for giving none. */
export interface PairingCheck {
  readonly result: ScalePairResult | null;
  readonly unexpected: UnexpectedInterval | null;
}

/**
 * The pair's interval error behind the unexpected-pitch guard: when both sides are heard and their
 * interval is more than {@link PAIR_GUARD_CENTS} from the nominal `1200 · (voltsHigh − voltsLow)` cents
 * (1 V/oct), `unexpected` says so and there is no result; otherwise as {@link pairingResult}.
 *
 * @param pairing - The sides.
 * @param settings - Voltages and tolerance.
 * @example checkPairing({ low: { hz: 130, startSeconds: 0 }, high: { hz: 1040, startSeconds: 3 } }, { voltsLow: 1, voltsHigh: 3, toleranceCents: 1 }).unexpected // { measuredCents: 3600, expectedCents: 2400 }
 */
export function checkPairing(pairing: ScalePairPairing, settings: ScalePairSettings): PairingCheck {
  if (!pairing.low || !pairing.high) return { result: null, unexpected: null };
  const measuredCents = CENTS_PER_OCTAVE * Math.log2(pairing.high.hz / pairing.low.hz);
  const expectedCents = CENTS_PER_OCTAVE * (settings.voltsHigh - settings.voltsLow);
  if (!(Math.abs(measuredCents - expectedCents) <= PAIR_GUARD_CENTS)) {
    return { result: null, unexpected: { measuredCents, expectedCents } };
  }
  return { result: pairingResult(pairing, settings), unexpected: null };
}
