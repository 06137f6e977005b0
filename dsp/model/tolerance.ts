/**
 * Tolerance judged honestly: a step counts as within tolerance only when its error plus its expanded
 * uncertainty is inside the tolerance, outside only when its error minus the expanded uncertainty is beyond
 * it, and otherwise the verdict is "can't tell yet", with what would settle it. This is the guarded
 * acceptance of ISO 14253-1:2017 (conformance proven only when the measured value lies inside the tolerance
 * shrunk by U; nonconformance only outside it widened by U).
 */
import { formatCents, formatUncertainty, formatVolts } from '../format/index.ts';
import type { BudgetSource, UncertaintyBudget } from './budget.ts';
import type { Cents, Volts } from '../math/index.ts';

/** A step's verdict. */
export type ToleranceVerdict = 'within' | 'outside' | 'cannot-tell';

/** One step as judged. */
export interface ToleranceStep {
  /** Index of the step in the input. */
  readonly index: number;
  readonly volts: Volts;
  /** Signed error, cents. */
  readonly errorCents: Cents;
  /** Expanded uncertainty U of the error, cents. */
  readonly expandedCents: Cents;
  readonly verdict: ToleranceVerdict;
  /** For `cannot-tell`: the largest U that would decide, cents (`tol − |error|` or `|error| − tol`). */
  readonly neededExpandedCents: Cents | null;
  /** For `cannot-tell`: what would settle it, in words. */
  readonly settle: string | null;
}

/** The verdict over the range. */
export interface ToleranceResult {
  readonly toleranceCents: Cents;
  /** `within` only when every step is; `outside` when any step is; else `cannot-tell`. */
  readonly verdict: ToleranceVerdict;
  readonly steps: readonly ToleranceStep[];
  /** One line for the report. */
  readonly text: string;
}

/** What to do about each dominant contribution. */
const REMEDY: Record<BudgetSource, string> = {
  estimator: 'hold each step longer so the reading averages more cycles',
  repeatability: 'hold each step longer, or repeat it and average, to beat down the oscillator’s wander',
  settling: 'wait longer after each voltage change before the reading starts',
  'reference-voltage':
    'measure each voltage at the input jack with a more accurate meter and enter the readings',
  'meter-resolution': 'use a meter range or meter with a finer last digit',
  clock: 'measure the interface clock against a known reference tone (analyze --true-hz)',
  temperature: 'keep the room and the unit at a steadier temperature during the run',
  scatter:
    'find why the steps scatter about the model (drift, a wrong voltage, a loose cable) and measure again',
};

/** Input for {@link judgeTolerance}: one per step. */
export interface ToleranceInput {
  readonly index: number;
  readonly volts: Volts;
  readonly errorCents: Cents;
  /** The error's budget (its `expanded` and `dominant` are used). */
  readonly budget: Pick<UncertaintyBudget, 'expanded' | 'dominant'>;
}

/**
 * Judges every step against a tolerance (guarded acceptance, ISO 14253-1): within when
 * `|error| + U ≤ tol`, outside when `|error| − U > tol`, else "can't tell yet", with the U that would decide
 * and the remedy for the budget's dominant contribution.
 *
 * @param steps - Errors with their budgets.
 * @param toleranceCents - Tolerance, cents, > 0 and at most 1200.
 * @throws RangeError for an invalid tolerance or a non-finite error.
 * @example
 * judgeTolerance([{ index: 0, volts: 1, errorCents: 0.2, budget: { expanded: 0.1, dominant: 'estimator' } }], 0.5).verdict // 'within'
 */
export function judgeTolerance(steps: readonly ToleranceInput[], toleranceCents: Cents): ToleranceResult {
  if (!Number.isFinite(toleranceCents) || toleranceCents <= 0 || toleranceCents > 1200) {
    throw new RangeError(
      `toleranceCents must be a finite number greater than 0 and at most 1200, got ${toleranceCents}`,
    );
  }
  const tol = toleranceCents;
  const judged: ToleranceStep[] = steps.map((s, i) => {
    if (!Number.isFinite(s.errorCents))
      throw new RangeError(`steps[${i}].errorCents must be finite, got ${s.errorCents}`);
    const u = Math.max(0, s.budget.expanded);
    const a = Math.abs(s.errorCents);
    if (a + u <= tol)
      return {
        index: s.index,
        volts: s.volts,
        errorCents: s.errorCents,
        expandedCents: u,
        verdict: 'within',
        neededExpandedCents: null,
        settle: null,
      };
    if (a - u > tol)
      return {
        index: s.index,
        volts: s.volts,
        errorCents: s.errorCents,
        expandedCents: u,
        verdict: 'outside',
        neededExpandedCents: null,
        settle: null,
      };
    const needed = Math.abs(tol - a);
    const remedy = s.budget.dominant === null ? 'measure again' : REMEDY[s.budget.dominant];
    return {
      index: s.index,
      volts: s.volts,
      errorCents: s.errorCents,
      expandedCents: u,
      verdict: 'cannot-tell',
      neededExpandedCents: needed,
      settle:
        `the error ${formatCents(s.errorCents)} ± ${formatUncertainty(u)} cents straddles the ±${tol} cent tolerance: ` +
        `U must fall below ${formatUncertainty(needed)} cent to decide; ${remedy}.`,
    };
  });
  const verdict: ToleranceVerdict = judged.some((s) => s.verdict === 'outside')
    ? 'outside'
    : judged.every((s) => s.verdict === 'within')
      ? 'within'
      : 'cannot-tell';
  const worst = judged.reduce<ToleranceStep | null>(
    (w, s) =>
      w === null || Math.abs(s.errorCents) + s.expandedCents > Math.abs(w.errorCents) + w.expandedCents
        ? s
        : w,
    null,
  );
  let text: string;
  if (judged.length === 0) text = 'No steps to judge against the tolerance.';
  else if (verdict === 'within')
    text = `Every step is within ±${tol} cent, uncertainty included (worst ${formatCents(worst!.errorCents)} ± ${formatUncertainty(worst!.expandedCents)} cents at ${formatVolts(worst!.volts)}).`;
  else if (verdict === 'outside') {
    const out = judged.filter((s) => s.verdict === 'outside');
    text = `Outside ±${tol} cent at ${out.map((s) => `${formatVolts(s.volts)} (${formatCents(s.errorCents)} ± ${formatUncertainty(s.expandedCents)})`).join(', ')}.`;
  } else {
    const first = judged.find((s) => s.verdict === 'cannot-tell')!;
    text = `Can't tell yet whether every step is within ±${tol} cent: at ${first.volts} V ${first.settle}`;
  }
  return { toleranceCents: tol, verdict, steps: judged, text };
}
