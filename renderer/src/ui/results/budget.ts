/**
 * The uncertainty budget of a result (dsp/model/budget.ts, kept in the saved result by dsp/calibration/result.ts) as the
 * printed report and the exports show it: for the scale error, the pitch at 0 V and each step, the named
 * contributions (standard uncertainties, already times their sensitivity), the combined standard
 * uncertainty u_c (root-sum-square, JCGM 100:2008 §5.1.2), the coverage factor k and the expanded
 * uncertainty U = k·u_c (JCGM 100:2008 §6.2.1, k from Student's t at 95.45 %, §G.3).
 */
import type { CalibrationResult } from '../../../../dsp/calibration/index.ts';
import { formatVolts } from '../../../../dsp/format/index.ts';
import { BUDGET_SOURCE_NAMES, budgetSourceName } from '../../../../dsp/model/index.ts';
import { BUDGET_TERM_SOURCES } from '../../lib/export.ts';

/** The contributions dsp/model/budget.ts names, in the order a budget lists them (BudgetSource). */
export const BUDGET_SOURCES = BUDGET_TERM_SOURCES;

/** Plain names of the contributions, for people (dsp/model/budget.ts). */
export const BUDGET_SOURCE_LABELS: Readonly<Record<string, string>> = BUDGET_SOURCE_NAMES;

/** The plain name of a contribution (its code when the name is not known). */
export const budgetSourceLabel = budgetSourceName;

/** One contribution of a budget. */
export interface BudgetTermView {
  readonly source: string;
  readonly label: string;
  /** `A` evaluated from the readings, `B` from a specification or a model. */
  readonly type: 'A' | 'B';
  /** Standard uncertainty it contributes, in the quantity's unit. */
  readonly standard: number;
}

/** The budget of one quantity. */
export interface BudgetView {
  /** `scale`, `pitch-at-0v` or `step-N` (N from 1). */
  readonly key: string;
  /** What is measured, in words ("Scale error", "Step 3, 2.000 V"). */
  readonly quantity: string;
  readonly unit: '¢' | '¢/oct';
  /** The step's number (from 1) and voltage, for a step's budget. */
  readonly step: { readonly number: number; readonly volts: number } | null;
  readonly terms: readonly BudgetTermView[];
  /** Combined standard uncertainty u_c. */
  readonly combined: number;
  /** Coverage factor k. */
  readonly coverageFactor: number;
  /** Expanded uncertainty U = k·u_c. */
  readonly expanded: number;
}

type StoredBudget = NonNullable<CalibrationResult['steps'][number]['budget']>;

function view(
  key: string,
  quantity: string,
  unit: BudgetView['unit'],
  b: StoredBudget,
  step: BudgetView['step'],
): BudgetView {
  const order = (s: string) => {
    const i = (BUDGET_SOURCES as readonly string[]).indexOf(s);
    return i < 0 ? BUDGET_SOURCES.length : i;
  };
  return {
    key,
    quantity,
    unit,
    step,
    terms: [...b.terms]
      .sort((x, y) => order(x.source) - order(y.source))
      .map((t) => ({
        source: t.source,
        label: budgetSourceLabel(t.source),
        type: t.type,
        standard: t.standardCents,
      })),
    combined: b.combinedCents,
    coverageFactor: b.coverageFactor,
    expanded: b.expandedCents,
  };
}

/**
 * The budgets of a result: the scale error and the pitch at 0 V (when the fit has them), then each step
 * that has one, in voltage order. Empty for a result without budgets (an older record).
 *
 * @param result - The one result of a run or recording, or null.
 * @example budgetsOf(result).map((b) => b.key) // ['scale', 'pitch-at-0v', 'step-1', 'step-2', …]
 */
export function budgetsOf(result: CalibrationResult | null): BudgetView[] {
  if (!result) return [];
  const out: BudgetView[] = [];
  const fit = result.fit;
  if (fit?.scaleBudget) out.push(view('scale', 'Scale error', '¢/oct', fit.scaleBudget, null));
  if (fit?.pitchAt0VBudget) out.push(view('pitch-at-0v', 'Pitch at 0 V', '¢', fit.pitchAt0VBudget, null));
  const steps = result.steps
    .filter((s) => s.budget !== null && s.volts !== null)
    .sort((a, b) => (a.volts ?? 0) - (b.volts ?? 0) || a.index - b.index);
  for (const s of steps) {
    const v = s.volts as number;
    out.push(
      view(`step-${s.index + 1}`, `Step ${s.index + 1}, ${formatVolts(v)}`, '¢', s.budget as StoredBudget, {
        number: s.index + 1,
        volts: v,
      }),
    );
  }
  return out;
}

/** The contributions that appear in any of the budgets, in the order of {@link BUDGET_SOURCES} (others after). */
export function budgetColumns(budgets: readonly BudgetView[]): string[] {
  const seen = new Set<string>();
  for (const b of budgets) for (const t of b.terms) seen.add(t.source);
  const known = BUDGET_SOURCES.filter((s) => seen.has(s));
  const other = [...seen].filter((s) => !(BUDGET_SOURCES as readonly string[]).includes(s)).sort();
  return [...known, ...other];
}

/** A contribution's standard uncertainty in a budget, or null when the budget has none of that source. */
export function termOf(b: BudgetView, source: string): number | null {
  const t = b.terms.filter((x) => x.source === source);
  if (t.length === 0) return null;
  return Math.sqrt(t.reduce((a, x) => a + x.standard * x.standard, 0));
}

/** A coverage factor with two decimals (k = 2.00, 2.13). */
export function formatK(k: number): string {
  return k.toFixed(2);
}
