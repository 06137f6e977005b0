/**
 * One shape for a result on screen and on paper, whether it comes from the run being measured, an opened
 * recording or a run stored in the unit book: rows in voltage order, the fit, and the advice. The views in
 * this folder take only this shape, so a saved run shows exactly its own stored values.
 */
import type { ResistorChange } from '../../../../dsp/advice/index.ts';
import { formatOhms } from '../../../../dsp/converter/index.ts';
import type { CalibrationResult, StepFlag } from '../../../../dsp/calibration/index.ts';
import type { RunAnalysis } from '../../lib/analysis.ts';
import { formatCents, formatNumber } from '../../../../dsp/format/index.ts';

const PART_NAMES: Record<ResistorChange['part'], string> = {
  series: 'Series Rs',
  shunt: 'Shunt Rsh',
  input: 'Input Rin',
  feedback: 'Feedback Rf',
};

/** One resistor change: exact value, then the nearest E24 and E96 values (IEC 60063) and what each leaves. */
export function resistorLine(r: ResistorChange): string {
  const pick = (v: ResistorChange['e24']) =>
    `${v.series} ${formatOhms(v.ohms)} (leaves ${formatCents(v.resultingScaleErrorCentsPerOctave)} ¢/oct)`;
  return `${PART_NAMES[r.part]} ${formatOhms(r.fromOhms)} → ${formatOhms(r.toOhms)} · ${pick(r.e24)} · ${pick(r.e96)}`;
}

/** One row of the error table. */
export interface ResultRow {
  /** Step number in the order of play, from 1. */
  readonly step: number;
  readonly nominalVolts: number;
  readonly measuredVolts: number | null;
  /** Voltage used in the analysis (the meter's when given). */
  readonly volts: number;
  readonly hz: number;
  readonly noteName: string;
  readonly noteCents: number;
  readonly centsFromIdeal: number;
  /** Interval error to the next lower voltage, cents; null on the lowest row. */
  readonly intervalErrorCents: number | null;
  readonly uncertaintyCents: number;
  /** Expanded uncertainty U of the step's error from its budget, cents; null when the step has no budget. */
  readonly expandedCents: number | null;
  /** What deserves a second look (dsp/calibration/result.ts `STEP_FLAGS`). */
  readonly flags: readonly StepFlag[];
}

/** The tracking fit as shown. */
export interface ResultFit {
  readonly scaleErrorCentsPerOctave: number;
  /** Standard error of the scale error, cents per octave, when known (not kept in records). */
  readonly scaleErrorStdErrCents: number | null;
  readonly octavesPerVolt: number;
  readonly hzAt0V: number;
  readonly maxResidualCents: number;
  /** Bends at the ends, in words, when analysed. */
  readonly highEnd: string | null;
  readonly lowEnd: string | null;
}

/** One piece of advice. */
export interface ResultAdvice {
  readonly trimmer: string;
  readonly status: string;
  readonly text: string;
  /** Resistor changes, one line each, when the input network is known. */
  readonly resistorLines: readonly string[];
}

/** A result as the views take it. */
export interface ResultModel {
  /** Rows in order of voltage (lowest first). */
  readonly rows: readonly ResultRow[];
  readonly fit: ResultFit | null;
  /** Spread of the cents from ideal, cents. */
  readonly spreadCents: number | null;
  readonly advice: readonly ResultAdvice[];
  readonly next: string | null;
  readonly caution: string | null;
  /**
   * The voltages each trimmer's advice is checked on, V: the scale over the fit's trusted middle (the
   * span the advice names), HF from the bottom of that middle to the top step. Null when not known.
   */
  readonly pairs: {
    readonly scale: { readonly low: number; readonly high: number } | null;
    readonly hf: { readonly low: number; readonly high: number } | null;
  };
  /** The one result this view was made from (dsp/calibration/result.ts): the model's budgets and verdict come from it. */
  readonly source: CalibrationResult | null;
}

/** A pair, or null unless high is above low. */
function pair(low: number, high: number): { low: number; high: number } | null {
  return Number.isFinite(low) && Number.isFinite(high) && high > low ? { low, high } : null;
}

/** The pair each trim's advice names in its target reading (the HF on the octave below its step), else `fallback`'s. */
function adviceTargetPairs(a: RunAnalysis, fallback: ResultModel['pairs']): ResultModel['pairs'] {
  const of = (t: 'scale' | 'hf') => {
    const target = a.advice.items.find((i) => i.trimmer === t && i.target)?.target;
    return target ? pair(target.fromVolts, target.volts) : null;
  };
  return { scale: of('scale') ?? fallback.scale, hf: of('hf') ?? fallback.hf };
}

/** Rows sorted by voltage, ties in order of play. */
function byVolts(rows: ResultRow[]): ResultRow[] {
  return rows.sort((a, b) => a.volts - b.volts || a.step - b.step);
}

function spread(rows: readonly ResultRow[]): number | null {
  if (rows.length === 0) return null;
  const c = rows.map((r) => r.centsFromIdeal);
  return Math.max(...c) - Math.min(...c);
}

/**
 * The result of a live run or an opened recording.
 *
 * @param a - The analysis.
 */
export function resultFromAnalysis(a: RunAnalysis): ResultModel {
  const rows = byVolts(
    (a.table?.rows ?? []).map((r) => ({
      step: (a.points[r.index]?.stepIndex ?? r.index) + 1,
      nominalVolts: r.nominalVolts,
      measuredVolts: r.measuredVolts,
      volts: r.volts,
      hz: r.hz,
      noteName: r.noteName,
      noteCents: r.noteCents,
      centsFromIdeal: r.centsFromIdeal,
      intervalErrorCents: r.intervalErrorCents,
      uncertaintyCents: r.uncertaintyCents,
      expandedCents: a.result.steps[r.index]?.budget?.expandedCents ?? null,
      flags: a.result.steps[r.index]?.flags ?? [],
    })),
  );
  const end = (e: { kind: string; direction?: string; centsAtEnd?: number }) =>
    e.kind === 'bent' ? `bends ${e.direction} ${formatNumber(e.centsAtEnd ?? 0, 1)} ¢` : 'straight';
  const fit: ResultFit | null =
    a.fit.kind === 'ok'
      ? {
          scaleErrorCentsPerOctave: a.fit.scaleErrorCentsPerOctave,
          scaleErrorStdErrCents: a.fit.scaleErrorStdErrCents,
          octavesPerVolt: a.fit.octavesPerVolt,
          hzAt0V: a.fit.hzAt0V,
          maxResidualCents: a.fit.maxAbsResidualCents,
          highEnd: a.bends.kind === 'ok' ? end(a.bends.highEnd) : null,
          lowEnd: a.bends.kind === 'ok' ? end(a.bends.lowEnd) : null,
        }
      : null;
  return {
    rows,
    fit,
    spreadCents: a.table ? a.table.spreadCents : spread(rows),
    advice: a.advice.items.map((it) => ({
      trimmer: it.trimmer,
      status: it.status,
      text: it.text,
      resistorLines: (it.resistors ?? []).map(resistorLine),
    })),
    next: a.advice.next,
    caution: a.advice.caution,
    pairs: adviceTargetPairs(
      a,
      a.fit.kind !== 'ok'
        ? { scale: null, hf: null }
        : a.bends.kind === 'ok'
          ? {
              scale: pair(a.bends.middle.fromVolts, a.bends.middle.toVolts),
              hf: pair(a.bends.middle.fromVolts, a.fit.toVolts),
            }
          : { scale: pair(a.fit.fromVolts, a.fit.toVolts), hf: pair(a.fit.fromVolts, a.fit.toVolts) },
    ),
    source: a.result,
  };
}

/**
 * A run stored in the unit book, exactly as stored (no value is recomputed: note names, cents and the fit
 * are the stored ones of the one result, dsp/calibration/result.ts).
 *
 * @param r - The stored result.
 * @example resultFromStored(result).rows.length // the stored steps with a voltage
 */
export function resultFromStored(r: CalibrationResult): ResultModel {
  const rows = byVolts(
    r.steps.flatMap((s) =>
      s.volts === null
        ? []
        : [
            {
              step: s.index + 1,
              nominalVolts: s.volts,
              measuredVolts: s.measuredVolts,
              volts: s.measuredVolts ?? s.volts,
              hz: s.hz,
              noteName: s.note,
              noteCents: s.centsFromNote,
              centsFromIdeal: s.centsFromIdeal ?? 0,
              intervalErrorCents: s.intervalErrorCents,
              // The reading's own standard uncertainty, as the live run and recording tables show it
              // (ErrorTableHead's COLUMN_HELP.sigma): one meaning for the column in every view.
              uncertaintyCents: s.uncertaintyCents,
              expandedCents: s.budget?.expandedCents ?? null,
              flags: s.flags,
            },
          ],
    ),
  );
  const end = (e: { kind: string; centsAtEnd: number | null } | null) =>
    e === null
      ? null
      : e.kind === 'straight'
        ? 'straight'
        : `bends ${e.kind} ${formatNumber(e.centsAtEnd ?? 0, 1)} ¢`;
  const fit: ResultFit | null = r.fit
    ? {
        scaleErrorCentsPerOctave: r.fit.scaleErrorCentsPerOctave,
        scaleErrorStdErrCents: r.fit.scaleErrorStdErrCents,
        octavesPerVolt: r.fit.octavesPerVolt,
        hzAt0V: r.fit.hzAt0V,
        maxResidualCents: r.fit.maxResidualCents,
        highEnd: end(r.fit.highEnd),
        lowEnd: end(r.fit.lowEnd),
      }
    : null;
  const trims = r.advice.filter((a) => a.kind === 'trim');
  const next = r.advice.find((a) => a.kind === 'next')?.text ?? null;
  const caution = r.advice.find((a) => a.kind === 'caution')?.text ?? null;
  const from = r.fit?.fromVolts ?? null;
  const to = r.fit?.toVolts ?? null;
  return {
    rows,
    fit,
    spreadCents: spread(rows),
    advice: trims.map((a) => ({
      trimmer: a.trimmer,
      status: a.status ?? 'note',
      text: a.text,
      resistorLines: (a.resistors ?? []).map(resistorLine),
    })),
    next,
    caution,
    pairs: {
      scale:
        from !== null && to !== null
          ? pair(from, to)
          : rows.length >= 2
            ? pair(rows[0].volts, rows[rows.length - 1].volts)
            : null,
      hf: from !== null && to !== null ? pair(from, to) : null,
    },
    source: r,
  };
}
