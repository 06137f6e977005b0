/**
 * What the run's views draw from: the error table, the tracking fit, the bend analysis and the trim
 * advice of one {@link Calibration} (`dsp/calibration/pipeline.ts`), which the engine worker computes for a live run
 * and the recording analysis for a WAV file. Nothing here computes: it only reshapes for the views.
 */
import { TRIM_CAUTION, type TrimAdvice } from '../../../dsp/advice/index.ts';
import type { BendAnalysis, TrackingFit } from '../../../dsp/model/index.ts';
import type { Calibration, CaptureQuality } from '../../../dsp/calibration/index.ts';
import type { PitchOk } from '../../../dsp/pitch/index.ts';
import type { RecordingAnalysisOk } from '../../../dsp/recording/index.ts';
import type { CalibrationResult } from '../../../dsp/calibration/index.ts';
import type { CapturedPoint } from '../../../dsp/calibration/index.ts';
import type { ErrorTable } from '../../../dsp/calibration/index.ts';

/** Everything the views show of a pass. */
export interface RunAnalysis {
  /** The captured steps, plan order. */
  readonly points: readonly CapturedPoint[];
  /** One row per captured step (same order as `points`), or null with no captures. */
  readonly table: ErrorTable | null;
  readonly fit: TrackingFit;
  readonly bends: BendAnalysis;
  readonly advice: TrimAdvice;
  /** The one result: what the JSON export and a saved run hold. */
  readonly result: CalibrationResult;
}

/** Advice of a pass that has none (a single tone of unknown voltage): only the caution. */
const NO_ADVICE: TrimAdvice = {
  items: [],
  next: 'Give the voltages of the steps to get a table, a fit and advice.',
  allWithinTolerance: false,
  caution: TRIM_CAUTION,
};

/**
 * A calibration in the shape the run's views take. Nothing is recomputed.
 *
 * @param c - A calibration (`calibrate`, dsp/calibration/pipeline.ts).
 * @example runAnalysisOf(calibrate(runSteps(run))).points.length // captured steps
 */
export function runAnalysisOf(c: Calibration): RunAnalysis {
  return {
    points: c.result.steps.map((s) => ({
      stepIndex: s.index,
      nominalVolts: s.volts ?? 0,
      volts: s.measuredVolts ?? s.volts ?? 0,
      hz: s.hz,
      uncertaintyCents: s.uncertaintyCents,
      source: s.capture?.source === 'live-mean' ? ('live-mean' as const) : ('host' as const),
    })),
    table: c.table,
    fit: c.fit,
    bends: c.bends,
    advice: c.advice ?? NO_ADVICE,
    result: c.result,
  };
}

const NO_FIT: TrackingFit = { kind: 'none', reason: 'too-few-points' };

/**
 * A recording's analysis (`analyzeRecording`, dsp/recording/recording.ts) in the views' shape. Nothing is
 * recomputed: the table, fit, bends, advice and result are the recording's own.
 *
 * @param a - A completed analysis.
 * @example recordingAsRunAnalysis(a).fit.kind // 'ok' with two or more steps
 */
export function recordingAsRunAnalysis(a: RecordingAnalysisOk): RunAnalysis {
  return runAnalysisOf({
    result: a.result,
    table: a.table,
    fit: a.fit ?? NO_FIT,
    bends: a.bends ?? (NO_FIT as BendAnalysis),
    advice: a.advice,
  });
}

/** Extra detail of a capture measured by the engine (kept beside the run, carried into the result). */
export type CaptureDetail = CaptureQuality;

/**
 * The detail of a precise measurement kept beside the run.
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
