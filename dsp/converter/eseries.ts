/**
 * Preferred resistor values of the E24 and E96 series (IEC 60063:2015, "Preferred number series for
 * resistors and capacitors"), the nearest preferred value to a computed resistance, and a compact
 * engineering format for resistances.
 */
import type { Ohms } from '../math/index.ts';

/** The two series Spanmeter suggests values from. */
export type ESeries = 'E24' | 'E96';

/**
 * E24 values of one decade, two significant digits (IEC 60063 table; ±5 % tolerance class). Eight of
 * them (27, 30, 33, 36, 39, 43, 47, 82) differ from the rounded geometric series `10·10^(i/24)`: the
 * standard's table, not the formula, is authoritative.
 */
export const E24_VALUES: readonly number[] = Object.freeze([
  10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91,
]);

/**
 * E96 values of one decade, three significant digits (IEC 60063 table; ±1 % tolerance class). Every
 * one equals the rounded geometric series `round(100·10^(i/96))`.
 */
export const E96_VALUES: readonly number[] = Object.freeze([
  100, 102, 105, 107, 110, 113, 115, 118, 121, 124, 127, 130, 133, 137, 140, 143, 147, 150, 154, 158, 162,
  165, 169, 174, 178, 182, 187, 191, 196, 200, 205, 210, 215, 221, 226, 232, 237, 243, 249, 255, 261, 267,
  274, 280, 287, 294, 301, 309, 316, 324, 332, 340, 348, 357, 365, 374, 383, 392, 402, 412, 422, 432, 442,
  453, 464, 475, 487, 499, 511, 523, 536, 549, 562, 576, 590, 604, 619, 634, 649, 665, 681, 698, 715, 732,
  750, 768, 787, 806, 825, 845, 866, 887, 909, 931, 953, 976,
]);

/** The nearest preferred value to a resistance, with its neighbours. */
export interface PreferredValue {
  /** Series searched. */
  readonly series: ESeries;
  /** Nearest preferred value, Ω (nearest by ratio, i.e. on a logarithmic scale). */
  readonly ohms: Ohms;
  /** `(ohms − requested)/requested·100`, percent: positive when the preferred value is larger. */
  readonly errorPercent: number;
  /** Largest preferred value ≤ the request, Ω. */
  readonly lowerOhms: Ohms;
  /** Smallest preferred value ≥ the request, Ω. */
  readonly upperOhms: Ohms;
}

/** `mantissa·10^exponent` computed so that e.g. 47·10² is exactly 4700 and 47·10⁻¹ is the double nearest 4.7. */
function scaleByDecade(mantissa: number, exponent: number): number {
  return exponent >= 0 ? mantissa * Math.pow(10, exponent) : mantissa / Math.pow(10, -exponent);
}

/**
 * The preferred value nearest `ohms` in the E24 or E96 series (IEC 60063), in any decade. "Nearest" is
 * by ratio (the smaller |log(preferred/requested)|), which is how the series is spaced; a value exactly
 * in a series returns itself with 0 % error.
 *
 * @param ohms - Requested resistance, Ω, finite and > 0 (any decade; 1e-3 Ω to 1e12 Ω is typical).
 * @param series - `'E24'` or `'E96'`.
 * @returns The nearest value, its error in percent and the two bracketing values.
 * @throws RangeError when `ohms` is not a finite positive number or `series` is unknown.
 * @example nearestPreferred(3900, 'E24') // { series: 'E24', ohms: 3900, errorPercent: 0, lowerOhms: 3900, upperOhms: 3900 }
 * @example nearestPreferred(1810, 'E96') // { ohms: 1820, errorPercent: 0.552…, lowerOhms: 1780, upperOhms: 1820 }
 */
export function nearestPreferred(ohms: Ohms, series: ESeries): PreferredValue {
  if (!Number.isFinite(ohms) || ohms <= 0) {
    throw new RangeError(`ohms must be a finite number greater than 0, got ${ohms}`);
  }
  if (series !== 'E24' && series !== 'E96') {
    throw new RangeError(`series must be 'E24' or 'E96', got ${String(series)}`);
  }
  const table = series === 'E24' ? E24_VALUES : E96_VALUES;
  const digits = series === 'E24' ? 2 : 3;
  // Decade exponent so that ohms / 10^exp lies in [10^(digits−1), 10^digits).
  let exp = Math.floor(Math.log10(ohms)) - (digits - 1);
  let m = ohms / Math.pow(10, exp);
  // Guard floating-point edges of log10 (e.g. 1000 → 2.9999999).
  if (m >= Math.pow(10, digits)) {
    exp += 1;
    m = ohms / Math.pow(10, exp);
  } else if (m < Math.pow(10, digits - 1)) {
    exp -= 1;
    m = ohms / Math.pow(10, exp);
  }
  // Candidates: the decade's table plus the first value of the next decade (e.g. 976 Ω → 1 kΩ).
  const candidates = [...table.map((v) => scaleByDecade(v, exp)), scaleByDecade(table[0], exp + 1)];
  let lower = candidates[0];
  let upper = candidates[candidates.length - 1];
  for (const v of candidates) {
    if (v <= ohms) lower = v;
    if (v >= ohms && v < upper) upper = v;
  }
  const pick = Math.log(ohms / lower) <= Math.log(upper / ohms) ? lower : upper;
  return {
    series,
    ohms: pick,
    errorPercent: ((pick - ohms) / ohms) * 100,
    lowerOhms: lower,
    upperOhms: upper,
  };
}

/**
 * A resistance in engineering notation with up to four significant digits and the ohm sign:
 * `'3.9 kΩ'`, `'99.73 kΩ'`, `'470 Ω'`, `'2.2 MΩ'`.
 *
 * @param ohms - Resistance, Ω, finite and > 0.
 * @param significantDigits - 1 to 6. Default 4; trailing zeros are dropped.
 * @throws RangeError when `ohms` is not finite and positive or the digit count is out of range.
 * @example formatOhms(99728.4) // '99.73 kΩ'
 */
export function formatOhms(ohms: Ohms, significantDigits = 4): string {
  if (!Number.isFinite(ohms) || ohms <= 0) {
    throw new RangeError(`ohms must be a finite number greater than 0, got ${ohms}`);
  }
  if (!Number.isInteger(significantDigits) || significantDigits < 1 || significantDigits > 6) {
    throw new RangeError(`significantDigits must be an integer from 1 to 6, got ${significantDigits}`);
  }
  const prefixes: readonly [number, string][] = [
    [1e9, 'GΩ'],
    [1e6, 'MΩ'],
    [1e3, 'kΩ'],
    [1, 'Ω'],
    [1e-3, 'mΩ'],
  ];
  const rounded = Number(ohms.toPrecision(significantDigits));
  const [div, unit] = prefixes.find(([d]) => rounded >= d) ?? prefixes[prefixes.length - 1];
  const text = Number((rounded / div).toPrecision(significantDigits)).toString();
  return `${text} ${unit}`;
}

/** A resistance read from text by {@link parseOhms}. */
export type ParsedOhms =
  { readonly kind: 'ok'; readonly ohms: Ohms } | { readonly kind: 'error'; readonly message: string };

/** Largest resistance {@link parseOhms} accepts, Ω: 1 GΩ, beyond any resistor in a CV input network. */
export const MAX_PARSED_OHMS: Ohms = 1e9;

const MULTIPLIERS: Readonly<Record<string, number>> = { R: 1, r: 1, k: 1e3, K: 1e3, M: 1e6 };

/**
 * A resistance typed by a person: plain ohms (`470`, `1800`), a value with a multiplier suffix
 * (`100k`, `1.8k`, `2.2M`, `470R`), or the letter-for-decimal-point form printed on schematics and
 * resistor bodies (`4k02` = 4.02 kΩ, `2M2`, `4R7`; the RKM code of IEC 60062). An optional `Ω` or
 * `ohm` may follow; `k` and `K` both mean kilo, `M` mega (a lower-case `m` is refused: milliohms are
 * never meant here). An unreadable value is a typed error, never a throw.
 *
 * @param text - The value as typed.
 * @returns `{ kind: 'ok', ohms }` with 0 < ohms ≤ {@link MAX_PARSED_OHMS}, or `{ kind: 'error', message }`
 *   naming the text and the accepted forms.
 * @example parseOhms('1.8k') // { kind: 'ok', ohms: 1800 }
 * @example parseOhms('4k02') // { kind: 'ok', ohms: 4020 }
 * @example parseOhms('abc') // { kind: 'error', message: "'abc' is not a resistance: …" }
 */
export function parseOhms(text: string): ParsedOhms {
  const t = String(text)
    .trim()
    .replace(/\s*(Ω|ohms?)$/i, '')
    .trim();
  const bad = (why: string): ParsedOhms => ({
    kind: 'error',
    message: `'${String(text).trim()}' is not a resistance: ${why}`,
  });
  const forms = 'type ohms like 470, 100k, 1.8k, 4k02 or 2.2M';
  // 1.8k, 100k, 470R, 470 (suffix after the number) or 4k02, 2M2, 4R7 (the letter as the decimal point).
  const m = /^(\d+(?:\.\d*)?|\.\d+)\s*([RrkKM]?)$/.exec(t) ?? /^(\d+)([RrkKM])(\d+)$/.exec(t);
  if (!m) return bad(forms);
  const digits = m[3] === undefined ? m[1] : `${m[1]}.${m[3]}`;
  const ohms = Number(digits) * (MULTIPLIERS[m[2]] ?? 1);
  if (!Number.isFinite(ohms) || ohms <= 0) return bad('it must be greater than 0 Ω');
  if (ohms > MAX_PARSED_OHMS) return bad(`it must be at most 1 GΩ`);
  return { kind: 'ok', ohms: Number(ohms.toPrecision(12)) };
}
