/**
 * Safety limits of a drive and the ramps it moves along: a user-set maximum voltage that nothing
 * exceeds, targets checked before they are sent, levels clamped where they are sent, and short linear
 * ramps instead of jumps (common practice, no source: a step into a control input makes the oscillator
 * chirp and, on some modules, a transient; a ramp of tens of milliseconds avoids both).
 */
import type { Seconds, Volts } from '../math/index.ts';
import type { DriveCalibration } from './calibrate.ts';

/** Highest maximum a user may set, V (a 1 V/oct input's usual span is 0–10 V; common practice). */
export const MAX_DRIVE_VOLTS_CEILING: Volts = 10.5;
/** Default maximum: a 0–7 V plan fits with a volt to spare. */
export const DEFAULT_MAX_DRIVE_VOLTS: Volts = 8;
/** Default ramp between levels, s. */
export const DEFAULT_RAMP_SECONDS: Seconds = 0.05;
/** Allowed ramp lengths, s. */
export const RAMP_SECONDS_RANGE = [0.005, 2] as const;

/**
 * Throws when a maximum voltage is not in (0, {@link MAX_DRIVE_VOLTS_CEILING}].
 *
 * @example checkMaxVolts(8) // no throw
 */
export function checkMaxVolts(maxVolts: Volts): void {
  if (
    typeof maxVolts !== 'number' ||
    !Number.isFinite(maxVolts) ||
    maxVolts <= 0 ||
    maxVolts > MAX_DRIVE_VOLTS_CEILING
  )
    throw new RangeError(`maxVolts must be in (0, ${MAX_DRIVE_VOLTS_CEILING}] V, got ${maxVolts}`);
}

/** Whether a target voltage may be sent. */
export type TargetCheck = { readonly kind: 'ok' } | { readonly kind: 'refused'; readonly message: string };

/**
 * Checks a wanted voltage against the drive's range [0, maxVolts].
 *
 * @param volts - Wanted voltage, V.
 * @param maxVolts - The user's maximum, V.
 * @example checkTargetVolts(9, 8).kind // 'refused'
 */
export function checkTargetVolts(volts: Volts, maxVolts: Volts): TargetCheck {
  checkMaxVolts(maxVolts);
  if (typeof volts !== 'number' || !Number.isFinite(volts))
    return { kind: 'refused', message: `${String(volts)} is not a voltage.` };
  if (volts < 0)
    return { kind: 'refused', message: `${volts} V is below 0 V: the drive puts out 0 V and above only.` };
  if (volts > maxVolts)
    return {
      kind: 'refused',
      message: `${volts} V is above the drive's maximum of ${maxVolts} V: lower the plan or raise the maximum.`,
    };
  return { kind: 'ok' };
}

/**
 * The levels a drive may be sent so that its calibrated voltage stays within ±maxVolts (for a DC
 * output, also within full scale ±1).
 *
 * @param cal - The drive's calibration.
 * @param maxVolts - The user's maximum, V.
 * @param fullScale - The level's own limit (1 for a DC output's samples), or Infinity.
 * @example levelBounds(cal, 8, 1) // { low, high } with gain·high + offset = 8 when gain > 0
 */
export function levelBounds(
  cal: DriveCalibration,
  maxVolts: Volts,
  fullScale = Infinity,
): { low: number; high: number } {
  checkMaxVolts(maxVolts);
  const g = cal.gainVoltsPerLevel;
  const a = (maxVolts - cal.offsetVolts) / g;
  const b = (-maxVolts - cal.offsetVolts) / g;
  return { low: Math.max(-fullScale, Math.min(a, b)), high: Math.min(fullScale, Math.max(a, b)) };
}

/**
 * A level clamped into bounds (NaN becomes 0, the output's rest).
 *
 * @example clampLevel(2, { low: -0.8, high: 0.8 }) // 0.8
 */
export function clampLevel(level: number, bounds: { low: number; high: number }): number {
  if (!Number.isFinite(level)) return 0;
  return Math.min(bounds.high, Math.max(bounds.low, level));
}

/** A linear ramp of the level from `from` at `startSeconds` to `to` at `startSeconds + seconds`. */
export interface Ramp {
  readonly from: number;
  readonly to: number;
  readonly startSeconds: Seconds;
  readonly seconds: Seconds;
}

/**
 * Plans a ramp; the length is clamped to {@link RAMP_SECONDS_RANGE}.
 *
 * @param from - Level now.
 * @param to - Level wanted.
 * @param startSeconds - When the ramp starts, s (the audio clock).
 * @param seconds - Length, s.
 * @example planRamp(0, 0.5, 1, 0.05) // { from: 0, to: 0.5, startSeconds: 1, seconds: 0.05 }
 */
export function planRamp(from: number, to: number, startSeconds: Seconds, seconds: Seconds): Ramp {
  if (!Number.isFinite(from) || !Number.isFinite(to))
    throw new RangeError(`ramp levels must be finite, got ${from} → ${to}`);
  if (!Number.isFinite(startSeconds) || startSeconds < 0)
    throw new RangeError(`startSeconds must be finite and ≥ 0, got ${startSeconds}`);
  if (!Number.isFinite(seconds)) throw new RangeError(`seconds must be finite, got ${seconds}`);
  const s = Math.min(RAMP_SECONDS_RANGE[1], Math.max(RAMP_SECONDS_RANGE[0], seconds));
  return { from, to, startSeconds, seconds: s };
}

/**
 * The ramp's level at a time: `from` before it, `to` after it, linear between (as Web Audio's
 * `linearRampToValueAtTime` from a `setValueAtTime` anchor).
 *
 * @example rampLevelAt({ from: 0, to: 1, startSeconds: 0, seconds: 0.1 }, 0.05) // 0.5
 */
export function rampLevelAt(ramp: Ramp, seconds: Seconds): number {
  if (seconds <= ramp.startSeconds) return ramp.from;
  if (seconds >= ramp.startSeconds + ramp.seconds) return ramp.to;
  return ramp.from + ((ramp.to - ramp.from) * (seconds - ramp.startSeconds)) / ramp.seconds;
}
