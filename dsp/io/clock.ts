/**
 * The sound card's sample clock. Frequencies are measured against the interface's crystal, which is
 * off by roughly ±20 to ±100 ppm on consumer interfaces (docs/facts.md, common practice). An error e
 * (positive when the clock runs fast) makes every reading `f_true/(1 + e)`: all frequencies scale
 * alike, so intervals, and therefore the scale error, are immune, while absolute tuning is not.
 * 1 ppm is 0.001 731 cent and 100 ppm 0.173 cent (derived: `1200·log2(1 + e)`, Ellis 1885).
 */
import type { Cents, Hertz, Ppm } from '../math/index.ts';

/**
 * Largest clock correction accepted, ppm: ten times the worst consumer crystal. A larger apparent error
 * means the reference tone or the sample-rate setting is not what it is said to be (44.1 kHz versus
 * 48 kHz alone is 88 000 ppm).
 */
export const MAX_CLOCK_PPM: Ppm = 1000;

function requirePositive(name: string, value: number): void {
  if (!Number.isFinite(value) || value <= 0) {
    throw new RangeError(`${name} must be a finite number greater than 0, got ${value}`);
  }
}

function requirePpm(ppm: number): void {
  if (!Number.isFinite(ppm) || Math.abs(ppm) > MAX_CLOCK_PPM) {
    throw new RangeError(
      `ppm must be a finite number from −${MAX_CLOCK_PPM} to ${MAX_CLOCK_PPM}, got ${ppm}`,
    );
  }
}

/**
 * Applies a clock correction: `hz·(1 + ppm·10⁻⁶)`. With `ppm` the interface clock's error (positive =
 * fast), this turns a reading into the true frequency.
 *
 * @param hz - Measured frequency, Hz, > 0.
 * @param ppm - Clock error, ppm, within ±{@link MAX_CLOCK_PPM}. 0 leaves `hz` unchanged.
 * @returns Corrected frequency, Hz.
 * @throws RangeError when `hz` ≤ 0 or `ppm` is out of range.
 * @example applyClockPpm(440, 100) // 440.044
 */
export function applyClockPpm(hz: Hertz, ppm: Ppm): Hertz {
  requirePositive('hz', hz);
  requirePpm(ppm);
  return hz * (1 + ppm * 1e-6);
}

/** A clock error derived from a reference tone. */
export interface ClockFromReferenceOk {
  readonly kind: 'ok';
  /** Clock error, ppm (positive = the interface clock runs fast, so readings come out low). */
  readonly ppm: Ppm;
  /** The same error in cents, `1200·log2(1 + ppm·10⁻⁶)`. */
  readonly cents: Cents;
}

/** The reference disagrees with the reading by more than any plausible crystal error. */
export interface ClockFromReferenceNone {
  readonly kind: 'none';
  readonly reason: 'beyond-plausible-range';
  /** The apparent error, ppm, for display. */
  readonly ppm: Ppm;
}

/**
 * Clock error from a reference tone of known frequency (for example a generator with a disciplined
 * time base): `ppm = (trueHz/measuredHz − 1)·10⁶`, so that
 * `applyClockPpm(measuredHz, ppm) === trueHz`. The correction is only as good as the reference.
 *
 * @param measuredHz - Frequency read through the interface, Hz, > 0.
 * @param trueHz - The reference's actual frequency, Hz, > 0.
 * @returns The error in ppm and cents, or `{ kind: 'none', reason: 'beyond-plausible-range' }` beyond
 *   ±{@link MAX_CLOCK_PPM}.
 * @throws RangeError when a frequency is not finite and positive.
 * @example clockPpmFromReference(999.9, 1000) // { kind: 'ok', ppm: 100.01…, cents: 0.1731… }
 */
export function clockPpmFromReference(
  measuredHz: Hertz,
  trueHz: Hertz,
): ClockFromReferenceOk | ClockFromReferenceNone {
  requirePositive('measuredHz', measuredHz);
  requirePositive('trueHz', trueHz);
  const ppm = (trueHz / measuredHz - 1) * 1e6;
  if (Math.abs(ppm) > MAX_CLOCK_PPM) return { kind: 'none', reason: 'beyond-plausible-range', ppm };
  return { kind: 'ok', ppm, cents: ppmToCents(ppm) };
}

/**
 * Pitch shift of a clock error in cents: `1200·log2(1 + ppm·10⁻⁶)` (Ellis 1885). 1 ppm is
 * 0.001 731 cent; 100 ppm is 0.173 cent (derived).
 *
 * @param ppm - Ratio offset, ppm, greater than −10⁶.
 * @example ppmToCents(100) // 0.17311…
 */
export function ppmToCents(ppm: Ppm): Cents {
  if (!Number.isFinite(ppm) || ppm <= -1e6) {
    throw new RangeError(`ppm must be a finite number greater than −1000000, got ${ppm}`);
  }
  return 1200 * Math.log2(1 + ppm * 1e-6);
}

/**
 * The ratio offset of a pitch shift in ppm: `(2^(cents/1200) − 1)·10⁶`, the inverse of
 * {@link ppmToCents}.
 *
 * @param cents - Shift, cents, finite.
 * @example centsToPpm(1) // 577.79…
 */
export function centsToPpm(cents: Cents): Ppm {
  if (!Number.isFinite(cents)) throw new RangeError(`cents must be a finite number, got ${cents}`);
  return (Math.pow(2, cents / 1200) - 1) * 1e6;
}
