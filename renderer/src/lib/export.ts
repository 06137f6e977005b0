/**
 * The CSV export of a run: a few header lines about the unit, then one row per captured step.
 */
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
] as const;

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
  ]);
  const table: CsvCell[][] = [[...CSV_STEP_COLUMNS], ...rows];
  return toCsv(head.length > 0 ? [...head, [], ...table] : table);
}
