/**
 * The CSV export's shared parts: the step columns and the budget cells and lines. The export itself is
 * `reportToCsv` (ui/results/report.ts), one function for the live run and any saved run.
 */
import type { CalibrationResult } from '../../../dsp/calibration/index.ts';
import type { CsvCell } from './csv.ts';

/**
 * The named contributions of a step's budget (dsp/model/budget.ts BudgetSource), each a CSV column of its own
 * (`budget_u_<source>_cents`).
 */
export const BUDGET_TERM_SOURCES = [
  'estimator',
  'repeatability',
  'settling',
  'reference-voltage',
  'meter-resolution',
  'clock',
  'temperature',
  'scatter',
] as const;

/**
 * A step's uncertainty budget in the step table (the budget of its pitch at its voltage, dsp/model/budget.ts):
 * the combined standard uncertainty u_c, the coverage factor k, the expanded uncertainty U = k·u_c (JCGM
 * 100:2008 §6.2.1) and each named contribution, two significant digits (JCGM 100:2008 §7.2.6).
 */
const STEP_BUDGET_COLUMNS = [
  'budget_combined_u_cents',
  'budget_coverage_k',
  'budget_expanded_u_cents',
  'budget_u_estimator_cents',
  'budget_u_repeatability_cents',
  'budget_u_settling_cents',
  'budget_u_reference_voltage_cents',
  'budget_u_meter_resolution_cents',
  'budget_u_clock_cents',
  'budget_u_temperature_cents',
  'budget_u_scatter_cents',
] as const;

/** Column names of the step rows, in order. */
export const CSV_STEP_COLUMNS = [
  'step',
  'nominal_volts',
  'measured_volts',
  'hz',
  'uncertainty_cents',
  'note',
  'cents_from_note',
  'cents_from_ideal',
  'interval_error_cents',
  ...STEP_BUDGET_COLUMNS,
] as const;

/** Two significant digits as a number (JCGM 100:2008 §7.2.6), or null. */
function twoSignificant(v: number | null | undefined): number | null {
  if (v === null || v === undefined || !Number.isFinite(v)) return null;
  if (v === 0) return 0;
  return Number(v.toPrecision(2));
}

/**
 * The budget cells of one step (the columns after `interval_error_cents`): empty when the result has no
 * budget for the step (an older record).
 *
 * @param result - The one result the row comes from.
 * @param stepIndex - The step's index in the result (0-based).
 * @example stepBudgetCells(result, 0)[1] // 2 (k)
 */
export function stepBudgetCells(result: CalibrationResult | null, stepIndex: number): CsvCell[] {
  const b = result?.steps.find((s) => s.index === stepIndex)?.budget ?? null;
  if (!b) return STEP_BUDGET_COLUMNS.map(() => null);
  const term = (source: string) => {
    const t = b.terms.filter((x) => x.source === source);
    return t.length === 0 ? null : Math.sqrt(t.reduce((a, x) => a + x.standardCents ** 2, 0));
  };
  return [
    twoSignificant(b.combinedCents),
    Number(b.coverageFactor.toFixed(2)),
    twoSignificant(b.expandedCents),
    ...BUDGET_TERM_SOURCES.map((src) => twoSignificant(term(src))),
  ];
}

/**
 * The key,value lines of a fit budget (the scale error or the 0 V pitch): u_c, k, U and each named
 * contribution, two significant digits.
 *
 * @param prefix - `scale_error` or `pitch_at_0v`.
 * @param unit - `cents_per_octave` or `cents`.
 */
export function fitBudgetLines(
  prefix: string,
  unit: string,
  b: NonNullable<NonNullable<CalibrationResult['fit']>['scaleBudget']> | null | undefined,
): CsvCell[][] {
  if (!b) return [];
  const lines: CsvCell[][] = [
    [`${prefix}_combined_u_${unit}`, twoSignificant(b.combinedCents)],
    [`${prefix}_coverage_k`, Number(b.coverageFactor.toFixed(2))],
    [`${prefix}_expanded_u_${unit}`, twoSignificant(b.expandedCents)],
  ];
  for (const t of b.terms)
    lines.push([`${prefix}_u_${t.source.replace(/-/g, '_')}_${unit}`, twoSignificant(t.standardCents)]);
  return lines;
}
