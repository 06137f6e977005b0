/**
 * The octave-spread error table: one row per measured step, with the nearest note, the error from the
 * ideal 1 V/oct line through the lowest-voltage step, and the interval from the next lower voltage. Rows
 * keep the order the steps were played in; the reference and the intervals follow the voltage order, so a
 * descending or unordered plan gives interval errors with the same sign as the fitted scale error.
 *
 * Cents are `1200·log2(f1/f2)` (A. J. Ellis, 1885); note names use 12-TET with A4 = 440 Hz by default
 * (ISO 16:1975) and scientific pitch notation, middle C = C4.
 */
import { A4_HZ, nearestNote } from '../math/index.ts';
import type { Cents, Hertz, Volts } from '../math/index.ts';

const CENTS_PER_OCTAVE = 1200;

/** One step as entered or measured. */
export interface TableStep {
  /** Voltage the step was meant to be, V, finite (e.g. 2 for "2 V"). */
  readonly nominalVolts: Volts;
  /** Voltage read at the oscillator's input with a meter, V, finite; the analysis uses it when given. */
  readonly measuredVolts?: Volts;
  /** Measured frequency, Hz, > 0. */
  readonly hz: Hertz;
  /** Standard uncertainty of the reading, cents, ≥ 0. */
  readonly uncertaintyCents: Cents;
}

/** One row of the error table. */
export interface TableRow {
  /** Position in the input (rows keep the input order). */
  readonly index: number;
  readonly nominalVolts: Volts;
  /** The meter reading, or null when none was given. */
  readonly measuredVolts: Volts | null;
  /** Voltage used in the analysis: `measuredVolts` when given, else `nominalVolts`. */
  readonly volts: Volts;
  readonly hz: Hertz;
  /** Nearest 12-TET note name, middle C = C4 (`'A4'`, `'C#3'`). */
  readonly noteName: string;
  /** Cents from that note to the reading, in [−50, +50). */
  readonly noteCents: Cents;
  /**
   * `1200·log2(f/f₀) − 1200·(V − V₀)` against the reference row, the lowest voltage (the first of
   * equal lowest voltages); 0 for the reference row itself.
   */
  readonly centsFromIdeal: Cents;
  /** Standard uncertainty of `centsFromIdeal`: √(σ² + σ₀²), 0 for the reference row. */
  readonly centsFromIdealUncertainty: Cents;
  /**
   * Position (`index`) of the row this row's interval is taken from: the previous row in voltage order
   * (ties in input order), or null for the lowest row.
   */
  readonly belowIndex: number | null;
  /** `1200·log2(f/f_below)`, or null for the lowest row. */
  readonly intervalCents: Cents | null;
  /** `intervalCents − 1200·(V − V_below)`, or null for the lowest row. */
  readonly intervalErrorCents: Cents | null;
  /** Standard uncertainty of the interval: √(σ² + σ_below²), or null for the lowest row. */
  readonly intervalUncertaintyCents: Cents | null;
  /** The reading's own standard uncertainty, cents. */
  readonly uncertaintyCents: Cents;
}

/** A built table with its summary. */
export interface ErrorTable {
  readonly kind: 'ok';
  readonly a4Hz: Hertz;
  readonly rows: readonly TableRow[];
  /** Largest minus smallest `centsFromIdeal`, cents: the octave spread. */
  readonly spreadCents: Cents;
  /** Largest |intervalErrorCents|, cents (0 with a single row). */
  readonly maxAbsIntervalErrorCents: Cents;
}

/** No steps were given. */
export interface ErrorTableNone {
  readonly kind: 'none';
  readonly reason: 'no-steps';
}

/** Options for {@link buildErrorTable}. */
export interface ErrorTableOptions {
  /** Tuning reference for note names, Hz, > 0. Default 440 (ISO 16:1975). */
  readonly a4Hz?: Hertz;
}

/**
 * Builds the octave-spread error table. Rows keep the input order (the order of play); each row's
 * interval is taken from the next lower voltage and the ideal line goes through the lowest voltage, so
 * the signs do not depend on the order the plan was played in (a wide octave is positive either way).
 *
 * @param steps - Steps with nominal (and optionally measured) volts, Hz > 0 and uncertainty ≥ 0.
 * @param opts - `a4Hz`, default 440.
 * @returns The table, or `{ kind: 'none', reason: 'no-steps' }` for an empty input.
 * @throws RangeError naming the first invalid field.
 * @example
 * buildErrorTable([
 *   { nominalVolts: 0, hz: 110, uncertaintyCents: 0.01 },
 *   { nominalVolts: 1, hz: 219.8, uncertaintyCents: 0.01 },
 * ]).rows[1] // { noteName: 'A3', intervalCents: 1198.43…, intervalErrorCents: −1.57…, centsFromIdeal: −1.57…, … }
 */
export function buildErrorTable(
  steps: readonly TableStep[],
  opts: ErrorTableOptions = {},
): ErrorTable | ErrorTableNone {
  const a4Hz = opts.a4Hz ?? A4_HZ;
  if (!Number.isFinite(a4Hz) || a4Hz <= 0)
    throw new RangeError(`a4Hz must be a finite number greater than 0, got ${a4Hz}`);
  steps.forEach((s, i) => {
    if (!Number.isFinite(s.nominalVolts)) {
      throw new RangeError(`steps[${i}].nominalVolts must be a finite number, got ${s.nominalVolts}`);
    }
    if (s.measuredVolts !== undefined && !Number.isFinite(s.measuredVolts)) {
      throw new RangeError(
        `steps[${i}].measuredVolts must be a finite number when given, got ${s.measuredVolts}`,
      );
    }
    if (!Number.isFinite(s.hz) || s.hz <= 0) {
      throw new RangeError(`steps[${i}].hz must be a finite number greater than 0, got ${s.hz}`);
    }
    if (!Number.isFinite(s.uncertaintyCents) || s.uncertaintyCents < 0) {
      throw new RangeError(
        `steps[${i}].uncertaintyCents must be a finite number at least 0, got ${s.uncertaintyCents}`,
      );
    }
  });
  if (steps.length === 0) return { kind: 'none', reason: 'no-steps' };
  const v = (s: TableStep) => s.measuredVolts ?? s.nominalVolts;
  // Voltage order, ties in input order (Array.prototype.sort is stable, ECMAScript 2019).
  const order = steps.map((_, i) => i).sort((a, b) => v(steps[a]) - v(steps[b]));
  const below = new Array<number | null>(steps.length).fill(null);
  order.forEach((idx, k) => (below[idx] = k > 0 ? order[k - 1] : null));
  const s0 = steps[order[0]];
  const rows: TableRow[] = steps.map((s, i) => {
    const note = nearestNote(s.hz, a4Hz);
    const b = below[i];
    const prev = b === null ? null : steps[b];
    const interval = prev === null ? null : CENTS_PER_OCTAVE * Math.log2(s.hz / prev.hz);
    const isRef = i === order[0];
    return {
      index: i,
      nominalVolts: s.nominalVolts,
      measuredVolts: s.measuredVolts ?? null,
      volts: v(s),
      hz: s.hz,
      noteName: note.name,
      noteCents: note.cents,
      centsFromIdeal: isRef
        ? 0
        : CENTS_PER_OCTAVE * Math.log2(s.hz / s0.hz) - CENTS_PER_OCTAVE * (v(s) - v(s0)),
      centsFromIdealUncertainty: isRef ? 0 : Math.hypot(s.uncertaintyCents, s0.uncertaintyCents),
      belowIndex: b,
      intervalCents: interval,
      intervalErrorCents:
        prev === null || interval === null ? null : interval - CENTS_PER_OCTAVE * (v(s) - v(prev)),
      intervalUncertaintyCents: prev === null ? null : Math.hypot(s.uncertaintyCents, prev.uncertaintyCents),
      uncertaintyCents: s.uncertaintyCents,
    };
  });
  const errs = rows.map((r) => r.centsFromIdeal);
  const intervalErrs = rows.map((r) => Math.abs(r.intervalErrorCents ?? 0));
  return {
    kind: 'ok',
    a4Hz,
    rows,
    spreadCents: Math.max(...errs) - Math.min(...errs),
    maxAbsIntervalErrorCents: Math.max(...intervalErrs),
  };
}
