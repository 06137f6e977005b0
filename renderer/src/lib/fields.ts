/**
 * The one parse rule of every number the user types (meter readings, voltages, tolerances, the Setup,
 * the unit book): digits with at most one decimal separator, which may be a point or a comma
 * ("1.002" and "1,002" are the same number); an optional sign (the typographic minus too); no exponent,
 * no thousands separators, no units. A field says what it takes ({@link DECIMAL_HINT}) and shows an
 * invalid value as invalid with the reason; nothing else is ever used in its place.
 *
 * The plan is the one list field: there the comma separates values, so its numbers take the point only
 * (dsp/calibration/plan.ts; the plan field says so).
 */

/** What every number field says it takes. */
export const DECIMAL_HINT = 'decimal point or comma';

/** Limits of a number field. */
export interface NumberRule {
  readonly min?: number;
  readonly max?: number;
  /** Unit shown in messages ('V', '°C', 'ppm'). */
  readonly unit?: string;
  /** Whether an empty field is allowed (it means "not set"). Default true. */
  readonly optional?: boolean;
  /** Whether only whole numbers are allowed. Default false. */
  readonly integer?: boolean;
}

/** The result of parsing a field. */
export type ParsedNumber =
  | { readonly kind: 'ok'; readonly value: number }
  | { readonly kind: 'empty' }
  | { readonly kind: 'invalid'; readonly reason: string };

const NUMBER = /^[+-]?(\d+([.,]\d*)?|[.,]\d+)$/;

function show(v: number, unit?: string): string {
  return `${String(v).replace('-', '−')}${unit ? ` ${unit}` : ''}`;
}

/**
 * Parses one typed number by the rule above. Never throws.
 *
 * @param text - What the field shows.
 * @param rule - Range, unit and whether empty is allowed.
 * @example parseNumberField('1,002', { min: -20, max: 20, unit: 'V' }) // { kind: 'ok', value: 1.002 }
 * @example parseNumberField('1e9', {}).kind // 'invalid'
 */
export function parseNumberField(text: string, rule: NumberRule = {}): ParsedNumber {
  const t = text.trim().replace(/\u2212/g, '-');
  if (t === '') {
    return rule.optional === false ? { kind: 'invalid', reason: 'needs a value' } : { kind: 'empty' };
  }
  if (!NUMBER.test(t)) {
    const why = /\d[.,]\d*[.,]/.test(t)
      ? 'use one decimal separator and no thousands separators'
      : /e/i.test(t)
        ? 'write the number out in digits (no exponent)'
        : /[a-z°Ω]/i.test(t)
          ? 'digits only: the unit is already given'
          : 'not a number';
    return { kind: 'invalid', reason: `“${text.trim()}”: ${why}` };
  }
  const v = Number(t.replace(',', '.'));
  if (!Number.isFinite(v)) return { kind: 'invalid', reason: `“${text.trim()}”: not a number` };
  if (rule.integer && !Number.isInteger(v)) return { kind: 'invalid', reason: 'whole numbers only' };
  if ((rule.min !== undefined && v < rule.min) || (rule.max !== undefined && v > rule.max)) {
    const range =
      rule.min !== undefined && rule.max !== undefined
        ? `between ${show(rule.min)} and ${show(rule.max, rule.unit)}`
        : rule.min !== undefined
          ? `at least ${show(rule.min, rule.unit)}`
          : `at most ${show(rule.max as number, rule.unit)}`;
    return { kind: 'invalid', reason: `must be ${range}` };
  }
  return { kind: 'ok', value: v };
}

/**
 * The value of a field, or null when it is empty or invalid.
 *
 * @example numberOrNull('2,5') // 2.5
 */
export function numberOrNull(text: string, rule: NumberRule = {}): number | null {
  const p = parseNumberField(text, rule);
  return p.kind === 'ok' ? p.value : null;
}

/** How far a meter reading may be from the set voltage before it is questioned, V: 3 % or 50 mV. */
export function meterTolerance(setVolts: number): number {
  return Math.max(0.03 * Math.abs(setVolts), 0.05);
}

/**
 * The question to ask before a meter reading is used, or null when it is plausible: a reading more than
 * 3 % (or 50 mV near 0 V) from the set voltage is more likely a typo than a reference that far off
 * (reference voltages need about 0.1 %, docs/facts.md; the margin is common practice, no source).
 *
 * @param meterVolts - The reading typed, V.
 * @param setVolts - The plan's voltage for the step, V.
 * @example meterQuestion(1.002, 6) // 'Meter reads 1.002 V on the 6 V step: a typo?'
 * @example meterQuestion(6.003, 6) // null
 */
export function meterQuestion(meterVolts: number, setVolts: number): string | null {
  if (Math.abs(meterVolts - setVolts) <= meterTolerance(setVolts)) return null;
  return `Meter reads ${show(meterVolts)} V on the ${show(setVolts)} V step: a typo?`;
}
