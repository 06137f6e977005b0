/**
 * A run with everything said about it: the data behind the unit book's run view, its CSV and JSON exports
 * and the printed report. A saved run carries its own date, label and unit details; the live run carries
 * the form's details and the time it was measured.
 */
import { version as SOFTWARE_VERSION } from '../../../../package.json';
import { resultToJsonText } from '../../../../dsp/calibration/index.ts';
import { judgeTolerance } from '../../../../dsp/model/index.ts';
import type { Run, UnitRecord } from '../../../../main/api-types.ts';
import { toCsv, type CsvCell } from '../../lib/csv.ts';
import { CSV_STEP_COLUMNS, fitBudgetLines, stepBudgetCells } from '../../lib/export.ts';
import { resultFromStored, type ResultModel, type ResultRow } from './model.ts';

export { SOFTWARE_VERSION };

/**
 * The default tracking tolerance, ± cents: "about ±2 cents over five octaves is a good analog result"
 * (docs/facts.md, published builders' measurements; common practice).
 */
export const DEFAULT_TOLERANCE_CENTS = 2;

/** A run as reported. */
export interface RunReport {
  readonly result: ResultModel;
  readonly unitName: string;
  readonly serial: string | null;
  readonly label: string | null;
  /** When the run was measured, ISO 8601; null when not known. */
  readonly takenAt: string | null;
  readonly roomTempC: number | null;
  readonly meterUsed: string | null;
  readonly warmUpMinutes: number | null;
  readonly notes: string | null;
  readonly planVolts: readonly number[];
  readonly toleranceCents: number;
  /** Whether the run is stored in the unit book (false: the live, unsaved run). */
  readonly saved: boolean;
  readonly softwareVersion: string;
}

/** The verdict of a run against a tolerance. */
export interface Verdict {
  /**
   * `pass`: every step is within the tolerance with its expanded uncertainty; `fail`: some step is beyond it
   * even after taking its uncertainty off; `cannot-tell`: some step straddles the limit; `none`: too few steps.
   */
  readonly kind: 'pass' | 'fail' | 'cannot-tell' | 'none';
  /** Largest |cents from ideal| over the steps, cents; null without steps. */
  readonly worstCents: number | null;
  /** The expanded uncertainty U of that step, cents; null without steps. */
  readonly worstExpandedCents: number | null;
  readonly text: string;
}

/** A verdict in one or two words, as the unit book's list shows it (the printed report shows it in capitals). */
export const VERDICT_LABELS: Readonly<Record<Verdict['kind'], string>> = {
  pass: 'Pass',
  fail: 'Fail',
  'cannot-tell': 'Can’t tell',
  none: '—',
};

/**
 * What the unit book's verdict judges, in words for its readers (the unit book, the printed report). The Fit
 * box's "On the note line" row judges something else (each step's pitch on the note line, offset included),
 * with the same guarded acceptance; each names what it judges.
 *
 * @example trackingBasis(1) // 'Tracking within ±1 ¢: each step against the ideal 1 V/oct line through the lowest step …'
 */
export function trackingBasis(toleranceCents: number): string {
  return (
    `Tracking within ±${String(toleranceCents)} ¢: each step against the ideal 1 V/oct line through ` +
    'the lowest step (the offset does not count), passed only when its error plus its expanded uncertainty ' +
    'stays inside'
  );
}

/**
 * The expanded uncertainty a row is judged with: its budget's U when the step has one, else twice its
 * standard uncertainty (k = 2, about 95 % with many degrees of freedom, JCGM 100:2008 §6.3).
 */
export function rowExpandedCents(r: ResultRow): number {
  return r.expandedCents ?? 2 * r.uncertaintyCents;
}

/**
 * The run against ±tolerance of the ideal 1 V/oct line through the lowest step, judged with each step's
 * expanded uncertainty (guarded acceptance, ISO 14253-1, `judgeTolerance` in dsp/model/tolerance.ts): a pass
 * only when |error| + U is inside the tolerance for every step, a fail when |error| − U is beyond it for any,
 * otherwise "can't tell yet" with what would settle it.
 *
 * @param result - The run's result.
 * @param toleranceCents - ± cents, > 0.
 * @example verdictFor(result, 2).kind // 'pass' when every |cents from ideal| + U ≤ 2
 */
export function verdictFor(result: ResultModel, toleranceCents: number): Verdict {
  if (result.rows.length < 2)
    return { kind: 'none', worstCents: null, worstExpandedCents: null, text: 'not enough steps' };
  const judged = judgeTolerance(
    result.rows.map((r, i) => ({
      index: i,
      volts: r.volts,
      errorCents: r.centsFromIdeal,
      budget: { expanded: rowExpandedCents(r), dominant: null },
    })),
    toleranceCents,
  );
  const worst = judged.steps.reduce((w, st) => (Math.abs(st.errorCents) > Math.abs(w.errorCents) ? st : w));
  const kind = judged.verdict === 'within' ? 'pass' : judged.verdict === 'outside' ? 'fail' : 'cannot-tell';
  const said = judged.text.replace(/\.$/, '');
  return {
    kind,
    worstCents: Math.abs(worst.errorCents),
    worstExpandedCents: worst.expandedCents,
    text: kind === 'pass' ? `Pass: ${said}` : kind === 'fail' ? `Fail: ${said}` : said,
  };
}

/**
 * The report of a stored run, with the record's unit details.
 *
 * @example reportOfStored(record, record.runs[0]).takenAt // the run's own takenAt
 */
export function reportOfStored(record: UnitRecord, run: Run): RunReport {
  return {
    result: resultFromStored(run.result),
    unitName: record.unitName,
    serial: record.serial ?? null,
    label: run.label,
    takenAt: run.takenAt,
    roomTempC: record.roomTempC ?? null,
    meterUsed: record.meterUsed ?? null,
    warmUpMinutes: record.warmUpMinutes ?? null,
    notes: record.notes ?? null,
    planVolts: run.plan.volts,
    toleranceCents: record.toleranceCents ?? DEFAULT_TOLERANCE_CENTS,
    saved: true,
    softwareVersion: SOFTWARE_VERSION,
  };
}

/** A date for people: "2026-12-02 16:41 UTC" style, in the local time zone with its offset. */
export function formatTakenAt(iso: string | null): string {
  if (!iso) return 'not recorded';
  const d = new Date(iso);
  if (!Number.isFinite(d.getTime())) return iso;
  const p = (n: number) => String(n).padStart(2, '0');
  const off = -d.getTimezoneOffset();
  const tz =
    off === 0
      ? 'UTC'
      : `UTC${off > 0 ? '+' : '−'}${p(Math.floor(Math.abs(off) / 60))}:${p(Math.abs(off) % 60)}`;
  return `${d.getFullYear()}-${p(d.getMonth() + 1)}-${p(d.getDate())} ${p(d.getHours())}:${p(d.getMinutes())} ${tz}`;
}

/**
 * The run as CSV: `key,value` lines (unit, serial, label, taken_at, room temperature, meter, warm-up,
 * notes, tolerance, verdict, software, fit, the budgets of the scale error and the 0 V pitch), a blank
 * line, then one row per step in voltage order with the columns of the live export (`CSV_STEP_COLUMNS`,
 * lib/export.ts, the step's budget included).
 *
 * @example reportToCsv(report).split('\r\n')[0] // 'unit,OL3-0417'
 */
export function reportToCsv(r: RunReport): string {
  const head: CsvCell[][] = [];
  const add = (key: string, value: CsvCell | undefined | null) => {
    if (value !== undefined && value !== null && value !== '') head.push([key, value]);
  };
  const v = verdictFor(r.result, r.toleranceCents);
  add('unit', r.unitName);
  add('serial', r.serial);
  add('label', r.label);
  add('taken_at', r.takenAt);
  add('room_temp_c', r.roomTempC);
  add('meter', r.meterUsed);
  add('warm_up_minutes', r.warmUpMinutes);
  add('notes', r.notes);
  add('tolerance_cents', r.toleranceCents);
  add('verdict', v.kind);
  add('software', `Spanmeter ${r.softwareVersion}`);
  if (r.result.fit) {
    add('octaves_per_volt', r.result.fit.octavesPerVolt);
    add('scale_error_cents_per_octave', r.result.fit.scaleErrorCentsPerOctave);
    add('hz_at_0v', r.result.fit.hzAt0V);
  }
  const fb = r.result.source?.fit;
  head.push(...fitBudgetLines('scale_error', 'cents_per_octave', fb?.scaleBudget));
  head.push(...fitBudgetLines('pitch_at_0v', 'cents', fb?.pitchAt0VBudget));
  const rows: CsvCell[][] = r.result.rows.map((x) => [
    x.step,
    x.nominalVolts,
    x.measuredVolts,
    x.hz,
    x.uncertaintyCents,
    x.noteName,
    x.noteCents,
    x.centsFromIdeal,
    x.intervalErrorCents,
    ...stepBudgetCells(r.result.source, x.step - 1),
  ]);
  return toCsv([...head, [], [...CSV_STEP_COLUMNS], ...rows]);
}

/** The `format` of the run report JSON (the app's JSON export). */
export const RUN_REPORT_FORMAT = 'spanmeter-run-report';

/**
 * The version of the run report envelope. Version 1 also copied the steps, fit, advice and budgets into
 * `run` under other names; from version 2 they are only in `result`, the one result shape.
 */
export const RUN_REPORT_VERSION = 2;

/**
 * The run as JSON: the run's one result exactly as `spanmeter analyze --json` prints it and the unit book
 * saves it (`result`: `resultToJsonText`, dsp/calibration/result.ts, versioned by its `schemaVersion`),
 * inside an envelope that only adds what the result does not hold: `{ format, version, software,
 * unit: { name, serial, roomTempC, meterUsed, warmUpMinutes, notes, toleranceCents }, run: { label, takenAt,
 * saved, plan, verdict }, result }`. Steps, fit, advice and the uncertainty budgets are read from `result`.
 *
 * @example JSON.parse(reportToJson(report)).result.schemaVersion // RESULT_SCHEMA_VERSION
 */
export function reportToJson(r: RunReport): string {
  const v = verdictFor(r.result, r.toleranceCents);
  return JSON.stringify(
    {
      format: RUN_REPORT_FORMAT,
      version: RUN_REPORT_VERSION,
      software: { name: 'Spanmeter', version: r.softwareVersion },
      unit: {
        name: r.unitName,
        serial: r.serial,
        roomTempC: r.roomTempC,
        meterUsed: r.meterUsed,
        warmUpMinutes: r.warmUpMinutes,
        notes: r.notes,
        toleranceCents: r.toleranceCents,
      },
      run: {
        label: r.label,
        takenAt: r.takenAt,
        saved: r.saved,
        plan: { volts: r.planVolts },
        // Judged against the unit's tolerance: not part of the result, which knows no tolerance.
        verdict: { kind: v.kind, worstCents: v.worstCents },
      },
      result: r.result.source ? (JSON.parse(resultToJsonText(r.result.source)) as unknown) : null,
    },
    null,
    2,
  );
}

/** A file name for a report: unit, label and the run's date ("ol3-0417-before-2026-12-02"). */
export function reportFileName(r: RunReport): string {
  const slug = (s: string) =>
    s
      .toLowerCase()
      .replace(/[^a-z0-9]+/g, '-')
      .replace(/^-+|-+$/g, '');
  const parts = [slug(r.unitName || r.serial || ''), slug(r.label ?? ''), (r.takenAt ?? '').slice(0, 10)];
  return parts.filter((x) => x !== '').join('-') || 'spanmeter-run';
}
