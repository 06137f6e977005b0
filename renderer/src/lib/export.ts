/**
 * The CSV export of a run: a few header lines about the unit, then one row per captured step.
 */
import type { CalibrationResult } from '../../../dsp/calibration/index.ts';
import { toCsv, type CsvCell } from './csv.ts';
import type { RunAnalysis } from './analysis.ts';

/** What the CSV says about the unit (free text typed by the user, neutralised on the way out). */
export interface CsvUnitInfo {
  readonly unitName?: string;
  readonly serial?: string;
  readonly notes?: string;
  readonly roomTempC?: number;
  readonly meterUsed?: string;
  readonly takenAt?: string;
  readonly label?: string;
}

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

/**
 * The run as CSV text: `key,value` header lines (unit, serial, notes, room temperature, meter, time,
 * label, fit), a blank line, then the step table with {@link CSV_STEP_COLUMNS}.
 *
 * @example runToCsv(analysis, { unitName: 'OL3-0417' }).split('\r\n')[0] // 'unit,OL3-0417'
 */
export function runToCsv(a: RunAnalysis, info: CsvUnitInfo = {}): string {
  const head: CsvCell[][] = [];
  const add = (key: string, value: CsvCell | undefined) => {
    if (value !== undefined && value !== '') head.push([key, value]);
  };
  add('unit', info.unitName);
  add('serial', info.serial);
  add('notes', info.notes);
  add('room_temp_c', info.roomTempC);
  add('meter', info.meterUsed);
  add('taken_at', info.takenAt);
  add('label', info.label);
  if (a.fit.kind === 'ok') {
    add('octaves_per_volt', a.fit.octavesPerVolt);
    add('scale_error_cents_per_octave', a.fit.scaleErrorCentsPerOctave);
    add('hz_at_0v', a.fit.hzAt0V);
  }
  head.push(...fitBudgetLines('scale_error', 'cents_per_octave', a.result.fit?.scaleBudget));
  head.push(...fitBudgetLines('pitch_at_0v', 'cents', a.result.fit?.pitchAt0VBudget));
  const rows: CsvCell[][] = (a.table?.rows ?? []).map((r, i) => [
    (a.points[i]?.stepIndex ?? r.index) + 1,
    r.nominalVolts,
    r.measuredVolts,
    r.hz,
    r.uncertaintyCents,
    r.noteName,
    r.noteCents,
    r.centsFromIdeal,
    r.intervalErrorCents,
    ...stepBudgetCells(a.result, a.points[i]?.stepIndex ?? r.index),
  ]);
  const table: CsvCell[][] = [[...CSV_STEP_COLUMNS], ...rows];
  return toCsv(head.length > 0 ? [...head, [], ...table] : table);
}
