/**
 * One shape for a result on screen and on paper, whether it comes from the run being measured, an opened
 * recording or a run stored in the unit book: rows in voltage order, the fit, and the advice. The views in
 * this folder take only this shape, so a saved run shows exactly its own stored values.
 */
import type { ResistorChange } from '../../../../dsp/advice.ts';
import { formatOhms } from '../../../../dsp/eseries.ts';
import { nearestNote } from '../../../../dsp/notes.ts';
import type { AnalysisResult } from '../../../../main/api-types.ts';
import type { RunAnalysis } from '../../lib/analysis.ts';
import { formatCents } from '../../lib/format.ts';

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
}

/** A pair, or null unless high is above low. */
function pair(low: number, high: number): { low: number; high: number } | null {
  return Number.isFinite(low) && Number.isFinite(high) && high > low ? { low, high } : null;
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
    })),
  );
  const end = (e: { kind: string; direction?: string; centsAtEnd?: number }) =>
    e.kind === 'bent' ? `bends ${e.direction} ${(e.centsAtEnd ?? 0).toFixed(1)} ¢` : 'straight';
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
    pairs:
      a.fit.kind !== 'ok'
        ? { scale: null, hf: null }
        : a.bends.kind === 'ok'
          ? {
              scale: pair(a.bends.middle.fromVolts, a.bends.middle.toVolts),
              hf: pair(a.bends.middle.fromVolts, a.fit.toVolts),
            }
          : { scale: pair(a.fit.fromVolts, a.fit.toVolts), hf: pair(a.fit.fromVolts, a.fit.toVolts) },
  };
}

function str(v: unknown, fallback: string): string {
  return typeof v === 'string' && v !== '' ? v : fallback;
}

/**
 * A run stored in the unit book, exactly as stored (no value is recomputed; note names come from the
 * stored frequency with A4 = 440 Hz, ISO 16:1975).
 *
 * @param r - The stored result.
 * @example resultFromStored({ steps: [], fit: null, advice: [] }).rows // []
 */
export function resultFromStored(r: AnalysisResult): ResultModel {
  const rows = byVolts(
    r.steps.map((s, i) => {
      const note = nearestNote(s.hz);
      return {
        step: i + 1,
        nominalVolts: s.volts,
        measuredVolts: s.measuredVolts ?? null,
        volts: s.measuredVolts ?? s.volts,
        hz: s.hz,
        noteName: note.name,
        noteCents: note.cents,
        centsFromIdeal: s.centsFromIdeal,
        intervalErrorCents: s.intervalErrorCents,
        uncertaintyCents: s.uncertaintyCents,
      };
    }),
  );
  const fit: ResultFit | null = r.fit
    ? {
        scaleErrorCentsPerOctave: r.fit.scaleErrorCentsPerOctave,
        scaleErrorStdErrCents: null,
        octavesPerVolt: r.fit.octavesPerVolt,
        hzAt0V: r.fit.hzAt0V,
        maxResidualCents: r.fit.maxResidualCents,
        highEnd: null,
        lowEnd: null,
      }
    : null;
  return {
    rows,
    fit,
    spreadCents: spread(rows),
    advice: r.advice.map((a) => ({
      trimmer: str(a.trimmer, 'none'),
      status: str(a.status, 'note'),
      text: a.text,
      resistorLines: [],
    })),
    next: null,
    caution: null,
    pairs: {
      scale: rows.length >= 2 ? pair(rows[0].volts, rows[rows.length - 1].volts) : null,
      hf: null,
    },
  };
}
