/**
 * Number formatting for the bench display: enough digits to show a hundredth of a cent, never more, and
 * signs written with a true minus so columns line up.
 */
import { formatUncertainty as formatTwoDigits } from '../../../dsp/model/index.ts';
import type { Cents, Hertz } from '../../../dsp/math/index.ts';

/** Frequency ratio of 0.01 cent, `2^(0.01/1200) − 1` (cents after A. J. Ellis, 1885). */
const HUNDREDTH_CENT_RATIO = Math.pow(2, 0.01 / 1200) - 1;

/**
 * Decimal places a frequency needs so that one unit in the last place is at most 0.01 cent.
 *
 * @param hz - Frequency, Hz, > 0 (non-finite or ≤ 0 gives 2).
 * @returns Decimals, 0…8.
 * @example hzDecimalsForHundredthCent(32.703) // 4 (1e-4 Hz is 0.0053 cent at C1)
 * @example hzDecimalsForHundredthCent(4186) // 2 (0.01 Hz is 0.0041 cent at C8)
 */
export function hzDecimalsForHundredthCent(hz: Hertz): number {
  if (!Number.isFinite(hz) || hz <= 0) return 2;
  const step = hz * HUNDREDTH_CENT_RATIO;
  return Math.max(0, Math.min(8, Math.ceil(-Math.log10(step))));
}

/**
 * A frequency with the digits a 0.01-cent reading needs.
 *
 * @example formatHz(261.6255653) // '261.62557'
 */
export function formatHz(hz: Hertz | null | undefined): string {
  if (hz === null || hz === undefined || !Number.isFinite(hz)) return '—';
  return hz.toFixed(hzDecimalsForHundredthCent(hz));
}

/** Writes a signed number with a true minus sign (U+2212) and a plus for positives. */
export function signed(value: number, decimals: number): string {
  if (!Number.isFinite(value)) return '—';
  const s = Math.abs(value).toFixed(decimals);
  if (Number(s) === 0) return ` ${s}`;
  return `${value < 0 ? '\u2212' : '+'}${s}`;
}

/**
 * Cents with a sign, two decimals (a hundredth of a cent).
 *
 * @example formatCents(-1.234) // '−1.23'
 */
export function formatCents(c: Cents | null | undefined, decimals = 2): string {
  if (c === null || c === undefined || !Number.isFinite(c)) return '—';
  return signed(c, decimals);
}

/**
 * An uncertainty: two significant digits (JCGM 100:2008 §7.2.6), through the one formatter every view and
 * the command line use (dsp/model/budget.ts); '—' when there is none.
 *
 * @example formatUncertainty(0.0123) // '0.012'
 * @example formatUncertainty(1.5) // '1.5'
 * @example formatUncertainty(null) // '—'
 */
export function formatUncertainty(c: Cents | null | undefined): string {
  if (c === null || c === undefined || !Number.isFinite(c)) return '—';
  return formatTwoDigits(c);
}

/**
 * Volts with three decimals (a millivolt, 1.2 cents at 1 V/oct).
 *
 * @example formatVolts(-1) // '−1.000 V'
 */
export function formatVolts(v: number | null | undefined, unit = true): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return '—';
  const s = `${v < 0 ? '\u2212' : ''}${Math.abs(v).toFixed(3)}`;
  return unit ? `${s} V` : s;
}

/** dBFS with one decimal; −∞ for digital silence. */
export function formatDbfs(db: number | null | undefined): string {
  if (db === null || db === undefined || Number.isNaN(db)) return '—';
  if (db === -Infinity) return '−∞ dBFS';
  return `${db < 0 ? '\u2212' : ''}${Math.abs(db).toFixed(1)} dBFS`;
}

/** Seconds as m:ss. @example formatClock(75) // '1:15' */
export function formatClock(seconds: number): string {
  if (!Number.isFinite(seconds) || seconds < 0) return '0:00';
  const m = Math.floor(seconds / 60);
  const s = Math.floor(seconds % 60);
  return `${m}:${String(s).padStart(2, '0')}`;
}
