/**
 * The number formatters of every surface (command line, app, printed report, the texts of `dsp/`).
 *
 * One rule set, chosen once:
 * - a negative value is written with a true minus sign, U+2212 (ISO 80000-1:2009, 7.1.4: the minus sign is
 *   not the hyphen), a positive signed value with a plus; a value that rounds to zero has no sign ("0.00");
 * - a missing or non-finite value (null, undefined, NaN, ±Infinity) is an em dash "—", never "NaN"
 *   (the one exception: −∞ dBFS, digital silence, is a real level and is written so);
 * - a value is written in plain decimals, never in exponent notation below 1e21.
 */
import type { Cents, Decibels, Hertz, Ppm, Seconds, Volts } from '../math/index.ts';

/** The minus sign every formatter writes, U+2212 (ISO 80000-1:2009, 7.1.4). */
export const MINUS_SIGN = '\u2212';

/** What every formatter writes for a missing or non-finite value: an em dash. */
export const NO_VALUE = '—';

/** A value a formatter accepts: a number, or nothing yet. */
type Maybe = number | null | undefined;

function isNumber(v: Maybe): v is number {
  return typeof v === 'number' && Number.isFinite(v);
}

/** Throws unless `decimals` is a whole number from 0 to `max` (misuse, not data). */
function checkDecimals(decimals: number, max: number): void {
  if (!Number.isInteger(decimals) || decimals < 0 || decimals > max)
    throw new RangeError(`decimals must be a whole number from 0 to ${max}, got ${decimals}`);
}

/** `|v|` with `decimals` places, in plain notation (exponent notation only at 1e21 and above). */
function plain(v: number, decimals: number): string {
  checkDecimals(decimals, 100);
  return Math.abs(v).toFixed(decimals);
}

/** True when `text` (digits and a point) is a zero, for example "0.000". */
function isZeroText(text: string): boolean {
  return /^0(\.0*)?$/.test(text);
}

/**
 * A number with a sign always written: a plus for positives, a true minus for negatives, none when it rounds
 * to zero. The building block of the signed formatters (cents, ppm).
 *
 * @param value - The number; null, undefined or non-finite gives "—".
 * @param decimals - Places after the point, a whole number from 0 to 100; otherwise a RangeError.
 * @example formatSigned(-1.234, 2) // '−1.23'
 * @example formatSigned(0.004, 2) // '0.00'
 * @example formatSigned(NaN, 2) // '—'
 */
export function formatSigned(value: Maybe, decimals: number): string {
  if (!isNumber(value)) return NO_VALUE;
  const s = plain(value, decimals);
  if (isZeroText(s)) return s;
  return `${value < 0 ? MINUS_SIGN : '+'}${s}`;
}

/**
 * A number with a sign only when it is negative (true minus), none for positives or a value that rounds to
 * zero. For quantities that are usually positive (volts, seconds, dBFS).
 *
 * @example formatNumber(-2, 3) // '−2.000'
 * @example formatNumber(-0.0004, 3) // '0.000'
 */
export function formatNumber(value: Maybe, decimals: number): string {
  if (!isNumber(value)) return NO_VALUE;
  const s = plain(value, decimals);
  return value < 0 && !isZeroText(s) ? `${MINUS_SIGN}${s}` : s;
}

/** Frequency ratio of 0.01 cent, `2^(0.01/1200) − 1` (cents after A. J. Ellis, 1885; docs/facts.md). */
const HUNDREDTH_CENT_RATIO = Math.pow(2, 0.01 / 1200) - 1;

/**
 * Decimal places a frequency needs so that one unit in the last place is at most 0.01 cent: the smallest
 * `d` with `10^−d ≤ hz · (2^(0.01/1200) − 1)`.
 *
 * @param hz - Frequency, Hz, > 0 (non-finite or ≤ 0 gives 2).
 * @returns Decimals, 0…8.
 * @example hzDecimalsForHundredthCent(32.703) // 4 (1e-4 Hz is 0.0053 cent at C1)
 * @example hzDecimalsForHundredthCent(261.63) // 3 (1e-3 Hz is 0.0066 cent at C4)
 * @example hzDecimalsForHundredthCent(4186) // 2 (0.01 Hz is 0.0041 cent at C8)
 */
export function hzDecimalsForHundredthCent(hz: Hertz): number {
  if (!Number.isFinite(hz) || hz <= 0) return 2;
  const step = hz * HUNDREDTH_CENT_RATIO;
  return Math.max(0, Math.min(8, Math.ceil(-Math.log10(step))));
}

/**
 * Decimal places for a column of frequencies: the most any of them needs (`hzDecimalsForHundredthCent`), so
 * every row resolves a hundredth of a cent and the decimal points line up.
 *
 * @param hzs - The column's frequencies, Hz; non-finite ones are skipped.
 * @returns Decimals, 0…8 (2 for an empty column).
 * @example hzColumnDecimals([55, 110, 880]) // 4 (what 55 Hz needs)
 */
export function hzColumnDecimals(hzs: readonly (Hertz | null | undefined)[]): number {
  const finite = hzs.filter(isNumber);
  return finite.length === 0 ? 2 : Math.max(...finite.map(hzDecimalsForHundredthCent));
}

/**
 * A frequency with the digits a 0.01-cent reading needs (`hzDecimalsForHundredthCent`), without the unit.
 * A column of frequencies passes the decimals its lowest row needs, so the points line up.
 *
 * @param hz - Frequency, Hz; null, undefined or non-finite gives "—".
 * @param decimals - Places after the point (default: the ones `hz` itself needs).
 * @example formatHz(261.6255653) // '261.626'
 * @example formatHz(32.70319566) // '32.7032'
 * @example formatHz(880, hzDecimalsForHundredthCent(55)) // '880.0000'
 * @example formatHz(null) // '—'
 */
export function formatHz(hz: Hertz | null | undefined, decimals?: number): string {
  if (!isNumber(hz)) return NO_VALUE;
  return formatNumber(hz, decimals ?? hzDecimalsForHundredthCent(hz));
}

/**
 * Cents with their sign, two decimals by default (a hundredth of a cent), without the unit.
 *
 * @param c - Cents; null, undefined or non-finite gives "—".
 * @param decimals - Places after the point (default 2).
 * @example formatCents(-1.234) // '−1.23'
 * @example formatCents(3.14159) // '+3.14'
 * @example formatCents(-0.004) // '0.00'
 */
export function formatCents(c: Cents | null | undefined, decimals = 2): string {
  return formatSigned(c, decimals);
}

/**
 * An uncertainty with two significant digits, as the GUM advises ("usually sufficient to quote u_c and U to
 * at most two significant digits", JCGM 100:2008, 7.2.6), in plain decimal notation; values of 100 and
 * more keep their whole units (123 stays '123'); only values below 1e-90 or from 1e21 on use an exponent.
 *
 * @param value - The uncertainty (any unit); null, undefined or non-finite gives "—".
 * @example formatUncertainty(0.0001234) // '0.00012'
 * @example formatUncertainty(2.345) // '2.3'
 * @example formatUncertainty(0.0999) // '0.10'
 * @example formatUncertainty(0) // '0'
 * @example formatUncertainty(null) // '—'
 */
export function formatUncertainty(value: number | null | undefined): string {
  if (!isNumber(value)) return NO_VALUE;
  if (value === 0) return '0';
  const a = Math.abs(value);
  const sign = value < 0 ? MINUS_SIGN : '';
  if (a < 1e-90 || a >= 1e21) return sign + a.toPrecision(2).replace('e-', `e${MINUS_SIGN}`);
  let decimals = Math.max(0, 1 - Math.floor(Math.log10(a)));
  // 0.0999… rounds to 0.100: one decimal fewer keeps two significant digits (0.10).
  if (decimals > 0 && Number(a.toFixed(decimals)) >= Math.pow(10, 2 - decimals)) decimals -= 1;
  return sign + a.toFixed(decimals);
}

/**
 * A value rounded to the decimals of its uncertainty (two significant digits of the uncertainty,
 * JCGM 100:2008 7.2.6), with a true minus when negative.
 *
 * @param value - The value; null, undefined or non-finite gives "—".
 * @param uncertainty - Its uncertainty, > 0; otherwise the value is written in full.
 * @example formatWithUncertainty(1.23456, 0.0123) // '1.235'
 * @example formatWithUncertainty(-1.23456, 0.12) // '−1.23'
 */
export function formatWithUncertainty(value: Maybe, uncertainty: number): string {
  if (!isNumber(value)) return NO_VALUE;
  if (!(uncertainty > 0) || !Number.isFinite(uncertainty)) {
    const s = String(Math.abs(value)).replace('e-', `e${MINUS_SIGN}`);
    return value < 0 ? `${MINUS_SIGN}${s}` : s;
  }
  const decimals = Math.max(0, 1 - Math.floor(Math.log10(uncertainty)));
  return formatNumber(value, Math.min(decimals, 12));
}

/**
 * Volts with three decimals (a millivolt, 1.2 cents at 1 V/oct; docs/facts.md), with the unit unless
 * `unit` is false (for a table under a "V" heading).
 *
 * @param v - Volts; null, undefined or non-finite gives "—".
 * @example formatVolts(-1) // '−1.000 V'
 * @example formatVolts(2, false) // '2.000'
 * @example formatVolts(null) // '—'
 */
export function formatVolts(v: Volts | null | undefined, unit = true): string {
  if (!isNumber(v)) return NO_VALUE;
  const s = formatNumber(v, 3);
  return unit ? `${s} V` : s;
}

/**
 * A level in dBFS with one decimal and the unit; digital silence (−Infinity) is "−∞ dBFS".
 *
 * @param db - Level, dBFS; null, undefined, NaN or +Infinity gives "—".
 * @example formatDbfs(-12.04) // '−12.0 dBFS'
 * @example formatDbfs(-Infinity) // '−∞ dBFS'
 */
export function formatDbfs(db: Decibels | null | undefined): string {
  if (db === -Infinity) return `${MINUS_SIGN}∞ dBFS`;
  if (!isNumber(db)) return NO_VALUE;
  return `${formatNumber(db, 1)} dBFS`;
}

/**
 * A duration in seconds with the unit, millisecond resolution by default.
 *
 * @param s - Seconds; null, undefined or non-finite gives "—".
 * @param decimals - Places after the point (default 3, a millisecond).
 * @example formatSeconds(1.5) // '1.500 s'
 * @example formatSeconds(12.34, 1) // '12.3 s'
 */
export function formatSeconds(s: Seconds | null | undefined, decimals = 3): string {
  if (!isNumber(s)) return NO_VALUE;
  return `${formatNumber(s, decimals)} s`;
}

/**
 * Elapsed time as a clock, m:ss, or h:mm:ss from an hour on, like a stopwatch: cut (not rounded) to whole
 * seconds, or to `decimals` places of a second (`1:02:03.4`).
 *
 * @param seconds - Elapsed time, s; negative gives zero, null, undefined or non-finite gives "—".
 * @param decimals - Places of a second, a whole number from 0 to 3 (default 0); otherwise a RangeError.
 * @example formatClock(75) // '1:15'
 * @example formatClock(3725) // '1:02:05'
 * @example formatClock(123.45, 1) // '2:03.4'
 */
export function formatClock(seconds: Seconds | null | undefined, decimals = 0): string {
  checkDecimals(decimals, 3);
  if (!isNumber(seconds)) return NO_VALUE;
  const d = decimals;
  const scale = Math.pow(10, d);
  // Cut to the shown resolution; the 1e-9 keeps 0.3 s from showing as 0.2 after binary rounding.
  const units = Math.max(0, Math.floor(seconds * scale + 1e-9));
  const whole = Math.floor(units / scale);
  const h = Math.floor(whole / 3600);
  const m = Math.floor((whole % 3600) / 60);
  const frac = d > 0 ? `.${String(units % scale).padStart(d, '0')}` : '';
  const s = `${String(whole % 60).padStart(2, '0')}${frac}`;
  return h > 0 ? `${h}:${String(m).padStart(2, '0')}:${s}` : `${m}:${s}`;
}

/**
 * A clock error in ppm with its sign, three decimals by default (a thousandth of a ppm is 2e-6 cent), without
 * the unit.
 *
 * @param ppm - Parts per million; null, undefined or non-finite gives "—".
 * @example formatPpm(37.5) // '+37.500'
 * @example formatPpm(-12.25) // '−12.250'
 */
export function formatPpm(ppm: Ppm | null | undefined, decimals = 3): string {
  return formatSigned(ppm, decimals);
}
