/**
 * What the renderer shows and stores about a run: the error table, the tracking fit, the bend analysis
 * and the trim advice, computed from the captured steps with `dsp/` (with the Setup's clock correction,
 * fit range and input network); and the record's analysis shape
 * (`main/ipc-contract.ts`, schema version 1). Pure functions of plain data.
 */
import { adviseTrim, type TrimAdvice } from '../../../dsp/advice.ts';
import { applyClockPpm } from '../../../dsp/clock.ts';
import type { BendAnalysis, TrackingFit } from '../../../dsp/fit.ts';
import { nearestNote } from '../../../dsp/notes.ts';
import type { PitchOk } from '../../../dsp/reading.ts';
import { fitAndAdvise, type CalibrationOptions, type RecordingAnalysisOk } from '../../../dsp/recording.ts';
import { runCaptures, type CapturedPoint, type RunState } from '../../../dsp/run.ts';
import { buildErrorTable, type ErrorTable, type TableRow } from '../../../dsp/table.ts';
import type { AnalysisResult, StepResult } from '../../../main/api-types.ts';

/** Everything derived from a run's captures. */
export interface RunAnalysis {
  /** The captured steps, plan order. */
  readonly points: readonly CapturedPoint[];
  /** One row per captured step (same order as `points`), or null with no captures. */
  readonly table: ErrorTable | null;
  readonly fit: TrackingFit;
  readonly bends: BendAnalysis;
  readonly advice: TrimAdvice;
}

function safe<T>(f: () => T, fallback: T): T {
  try {
    return f();
  } catch {
    return fallback;
  }
}

const NO_FIT: TrackingFit = { kind: 'none', reason: 'too-few-points' };

/** The Setup's part in an analysis: the clock correction, the fit range and the input network. */
export interface AnalysisSetup extends CalibrationOptions {
  /** Interface clock error, ppm (positive = fast), within ±1000 (dsp/clock.ts). Default 0. */
  readonly clockPpm?: number;
}

/** A frequency with the clock correction applied (unchanged when none or when it is refused). */
function corrected(hz: number, clockPpm: number): number {
  return clockPpm === 0 ? hz : safe(() => applyClockPpm(hz, clockPpm), hz);
}

/**
 * Analyses the captured steps of a run. Never throws (captures are checked by the run reducer; a
 * library refusal becomes the typed "none" result).
 *
 * @param state - A run.
 * @param a4Hz - Tuning reference for note names, Hz. Default 440 (ISO 16:1975).
 * @param setup - Clock correction, fit range and input network. Default none.
 * @example analyzeRun(createRun([0, 1])).table // null
 */
export function analyzeRun(state: RunState, a4Hz = 440, setup: AnalysisSetup = {}): RunAnalysis {
  const ppm = setup.clockPpm ?? 0;
  const points = runCaptures(state).map((p) => ({ ...p, hz: corrected(p.hz, ppm) }));
  return analyzePoints(
    points.map((p) => ({
      nominalVolts: p.nominalVolts,
      measuredVolts: p.volts !== p.nominalVolts ? p.volts : undefined,
      hz: p.hz,
      uncertaintyCents: p.uncertaintyCents,
    })),
    a4Hz,
    points,
    { ...setup, clockPpm: 0 }, // already applied
  );
}

/** One measured step as stored in a record or read from a file. */
export interface MeasuredStep {
  readonly nominalVolts: number;
  readonly measuredVolts?: number;
  readonly hz: number;
  readonly uncertaintyCents: number;
}

/**
 * The same analysis from plain measured steps (a stored record's run).
 *
 * @param steps - Steps in measuring order (frequencies as read).
 * @param a4Hz - Tuning reference, Hz.
 * @param points - The captured points, for their step indices.
 * @param setup - Clock correction (applied to every frequency), fit range and input network.
 */
export function analyzePoints(
  steps: readonly MeasuredStep[],
  a4Hz = 440,
  points: readonly CapturedPoint[] = steps.map((s, i) => ({
    stepIndex: i,
    nominalVolts: s.nominalVolts,
    volts: s.measuredVolts ?? s.nominalVolts,
    hz: s.hz,
    uncertaintyCents: s.uncertaintyCents,
    source: 'host' as const,
  })),
  setup: AnalysisSetup = {},
): RunAnalysis {
  const ppm = setup.clockPpm ?? 0;
  const clean = steps.map((s) => {
    const hz = corrected(s.hz, ppm);
    return s.measuredVolts === undefined
      ? { nominalVolts: s.nominalVolts, hz, uncertaintyCents: s.uncertaintyCents }
      : { ...s, hz };
  });
  const built = safe(() => buildErrorTable(clean, { a4Hz }), null);
  const table = built && built.kind === 'ok' ? built : null;
  const tp = clean.map((s) => ({
    volts: s.measuredVolts ?? s.nominalVolts,
    hz: s.hz,
    uncertaintyCents: s.uncertaintyCents,
  }));
  const calibration: CalibrationOptions = {
    ...(setup.fitFromVolts === undefined ? {} : { fitFromVolts: setup.fitFromVolts }),
    ...(setup.fitToVolts === undefined ? {} : { fitToVolts: setup.fitToVolts }),
    ...(setup.network === undefined ? {} : { network: setup.network }),
  };
  const done = safe(() => fitAndAdvise(tp, { ...calibration, a4Hz }), null);
  if (done === null) {
    const bends = NO_FIT as BendAnalysis;
    return { points, table, fit: NO_FIT, bends, advice: adviseTrim({ fit: NO_FIT }) };
  }
  return { points, table, ...done };
}

/**
 * The record's analysis shape (`AnalysisResultSchema` in main/ipc-contract.ts): steps, fit, advice.
 * Optional keys are left out rather than set to undefined (the IPC contract carries plain JSON only).
 *
 * @example toAnalysisResult(analyzeRun(run)).steps[0].intervalErrorCents // null
 */
export function toAnalysisResult(a: RunAnalysis): AnalysisResult {
  const rows: readonly TableRow[] = a.table?.rows ?? [];
  const steps: StepResult[] = rows.map((r) => {
    const s: StepResult = {
      volts: r.nominalVolts,
      hz: r.hz,
      uncertaintyCents: r.uncertaintyCents,
      centsFromIdeal: r.centsFromIdeal,
      intervalErrorCents: r.intervalErrorCents,
    };
    if (r.measuredVolts !== null) s.measuredVolts = r.measuredVolts;
    return s;
  });
  const fit =
    a.fit.kind === 'ok'
      ? {
          octavesPerVolt: a.fit.octavesPerVolt,
          scaleErrorCentsPerOctave: a.fit.scaleErrorCentsPerOctave,
          hzAt0V: a.fit.hzAt0V,
          maxResidualCents: a.fit.maxAbsResidualCents,
        }
      : null;
  const advice = a.advice.items.map((it) => ({
    text: it.text,
    trimmer: it.trimmer,
    status: it.status,
    direction: it.direction,
    errorCents: it.errorCents,
    ...(it.resistors === null ? {} : { resistors: it.resistors.map((r) => ({ ...r })) }),
  }));
  return { steps, fit, advice };
}

/** Extra detail of a capture measured by the engine (kept beside the run for the JSON export). */
export interface CaptureDetail {
  readonly clarity: number;
  readonly rmsDbfs: number;
  readonly peakDbfs: number;
  readonly windowSeconds: number;
  readonly harmonicsUsed: number;
}

/**
 * The detail of a precise measurement kept for the JSON export.
 *
 * @example captureDetail(reading).harmonicsUsed // 12
 */
export function captureDetail(m: PitchOk): CaptureDetail {
  return {
    clarity: m.clarity,
    rmsDbfs: m.level.rmsDbfs,
    peakDbfs: m.level.peakDbfs,
    windowSeconds: m.windowSeconds,
    harmonicsUsed: m.harmonicsUsed,
  };
}

/**
 * A recording's analysis (`analyzeRecording`, dsp/recording.ts) in the shape the run's views take
 * (fit summary, advice, chart, CSV, printed report). Nothing is recomputed: the table, fit, bends and
 * advice are the recording's own; only a missing fit becomes the typed "none".
 *
 * @param a - A completed analysis with points.
 * @example recordingAsRunAnalysis(a).fit.kind // 'ok' with two or more steps
 */
export function recordingAsRunAnalysis(a: RecordingAnalysisOk): RunAnalysis {
  const fit: TrackingFit = a.fit ?? NO_FIT;
  const bends: BendAnalysis = a.bends ?? (NO_FIT as BendAnalysis);
  return {
    points: a.steps.map((s) => ({
      stepIndex: s.index,
      nominalVolts: s.volts ?? 0,
      volts: s.measuredVolts ?? s.volts ?? 0,
      hz: s.hz,
      uncertaintyCents: s.uncertaintyCents,
      source: 'host' as const,
    })),
    table: a.table,
    fit,
    bends,
    advice: a.advice ?? adviseTrim({ fit, a4Hz: a.a4Hz }),
  };
}

function jsonNumber(v: number | undefined): number | null {
  return v !== undefined && Number.isFinite(v) ? v : null;
}

/**
 * The JSON export: the `spanmeter analyze --json` shape (`{"steps":[…]}`, one object per step with
 * `volts`, `hz`, `uncertaintyCents`, `note`, `noteHz`, `centsFromNote`, `a4Hz`, `clarity`, `rmsDbfs`,
 * `peakDbfs`, `windowSeconds`, `harmonicsUsed`; fields the app does not have are null), with the
 * run's `centsFromIdeal`, `intervalErrorCents` and `measuredVolts` per step and `fit` and `advice` beside.
 *
 * @param a - The analysis.
 * @param details - Engine detail per step index, when known.
 */
export function toAnalyzeJson(
  a: RunAnalysis,
  details: Readonly<Record<number, CaptureDetail>> = {},
  a4Hz = 440,
): string {
  const result = toAnalysisResult(a);
  const steps = result.steps.map((s, i) => {
    const d = details[a.points[i]?.stepIndex ?? -1];
    const note = nearestNote(s.hz, a4Hz);
    return {
      volts: s.volts,
      hz: s.hz,
      uncertaintyCents: s.uncertaintyCents,
      note: note.name,
      noteHz: note.noteHz,
      centsFromNote: note.cents,
      a4Hz,
      clarity: jsonNumber(d?.clarity),
      rmsDbfs: jsonNumber(d?.rmsDbfs),
      peakDbfs: jsonNumber(d?.peakDbfs),
      windowSeconds: jsonNumber(d?.windowSeconds),
      harmonicsUsed: jsonNumber(d?.harmonicsUsed),
      measuredVolts: s.measuredVolts ?? null,
      centsFromIdeal: s.centsFromIdeal,
      intervalErrorCents: s.intervalErrorCents,
    };
  });
  return JSON.stringify({ steps, fit: result.fit, advice: result.advice });
}
