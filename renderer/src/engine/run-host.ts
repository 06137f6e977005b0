/**
 * The host side of a calibration run (`dsp/calibration/run.ts`), as pure functions: feed a reading, answer the
 * run's request for a precise capture measurement, and the run's calibration through the one pipeline
 * (`dsp/calibration/pipeline.ts`). Moving a run onto a new stream clock is the reducer's `rebase` event.
 */
import {
  calibrate,
  runSteps,
  type CalibrateOptions,
  type Calibration,
  type CaptureQuality,
} from '../../../dsp/calibration/index.ts';
import type { PitchOk, PitchReading } from '../../../dsp/pitch/index.ts';
import { runReducer, type HostMeasurement, type RunState } from '../../../dsp/calibration/index.ts';

/** Measures a span of the stream, seconds since its first sample (`PitchTracker.averageOfSpan`). */
export type SpanMeasurer = (startSeconds: number, endSeconds: number) => PitchReading;

/** What {@link feedReading} did. */
export interface FeedResult {
  readonly state: RunState;
  /** The precise measurement handed to the run, when one was. */
  readonly measured: PitchOk | null;
  /** The step whose capture was stored by this reading, or null. */
  readonly capturedStep: number | null;
}

function capturedCount(s: RunState): number {
  let n = 0;
  for (const st of s.steps) if (st.capture) n++;
  return n;
}

/**
 * Answers the run's pending capture, if any: measures the span and dispatches the `capture-result`.
 * While the span has not fully arrived (`warming-up`) the request is left for the next reading; any other
 * non-answer is reported as `unavailable`, so the run falls back to its live mean.
 *
 * @param state - A run.
 * @param measure - The span measurer.
 * @returns The next state and the measurement used.
 */
export function answerPendingCapture(
  state: RunState,
  measure: SpanMeasurer,
): { state: RunState; measured: PitchOk | null } {
  const pc = state.pendingCapture;
  if (!pc) return { state, measured: null };
  let m: PitchReading;
  try {
    m = measure(pc.startSeconds, pc.endSeconds);
  } catch {
    m = { kind: 'none', reason: 'no-pitch', level: NO_LEVEL, timeSeconds: pc.endSeconds };
  }
  if (m.kind === 'none' && m.reason === 'warming-up') return { state, measured: null };
  const result: HostMeasurement =
    m.kind === 'ok'
      ? {
          kind: 'ok',
          hz: m.hz,
          uncertaintyCents: m.uncertaintyCents,
          ...(m.components ? { components: m.components } : {}),
          ...(m.breaks ? { breaks: m.breaks } : {}),
          // A measurer that found creep in the window (a recording's analysis) says so.
          ...(hostFlags(m).includes('still-settling') ? { flags: ['still-settling' as const] } : {}),
        }
      : { kind: 'unavailable' };
  const next = runReducer(state, {
    type: 'capture-result',
    stepIndex: pc.stepIndex,
    startSeconds: pc.startSeconds,
    endSeconds: pc.endSeconds,
    result,
  });
  return { state: next, measured: m.kind === 'ok' ? m : null };
}

/** Flags a measurer attached to its result (not part of a live reading's shape), or none. */
function hostFlags(m: PitchReading): readonly unknown[] {
  const f = (m as unknown as { flags?: unknown }).flags;
  return Array.isArray(f) ? f : [];
}

const NO_LEVEL = { rmsDbfs: -Infinity, peakDbfs: -Infinity, clippedFraction: 0 };

/**
 * One reading into the run, then the pending capture answered when the reading completed a window.
 *
 * @param state - A run.
 * @param reading - The live reading.
 * @param measure - The span measurer.
 * @example feedReading(run, reading, (a, b) => tracker.averageOfSpan(a, b)).state.phase // 'settling'
 */
export function feedReading(state: RunState, reading: PitchReading, measure: SpanMeasurer): FeedResult {
  const before = capturedCount(state);
  let s = runReducer(state, { type: 'reading', reading });
  const answered = answerPendingCapture(s, measure);
  s = answered.state;
  const stored = s.notes.find((n) => n.kind === 'captured');
  const capturedStep =
    stored && stored.kind === 'captured' ? stored.stepIndex : capturedCount(s) > before ? s.current : null;
  return { state: s, measured: answered.measured, capturedStep };
}

/**
 * The live run's calibration, made in the worker through the one pipeline (`calibrate`, dsp/calibration/pipeline.ts)
 * and remade only when a capture, a meter reading or the Setup changes (not on every reading).
 */
export class RunCalibrator {
  private setupValue: CalibrateOptions = {};
  private key = '';
  private last: Calibration | null = null;

  /** The Setup's tuning reference, clock correction, fit range and network. */
  set setup(setup: CalibrateOptions) {
    this.setupValue = setup;
    this.key = '';
  }

  get setup(): CalibrateOptions {
    return this.setupValue;
  }

  /**
   * The calibration of a run's captured steps. Never throws: a Setup the pipeline refuses (checked by the
   * Setup panel, so only a stale one) falls back to the plain analysis with no clock correction, range or
   * network, rather than losing the table.
   *
   * @param state - A run.
   * @param quality - Reading figures of each capture, by step index.
   */
  of(state: RunState, quality: Readonly<Record<number, CaptureQuality>>): Calibration {
    const steps = runSteps(state, quality);
    const key = JSON.stringify(steps);
    if (this.last && key === this.key) return this.last;
    let c: Calibration;
    try {
      c = calibrate(steps, this.setupValue);
    } catch {
      c = calibrate(steps, this.setupValue.a4Hz === undefined ? {} : { a4Hz: this.setupValue.a4Hz });
    }
    this.key = key;
    this.last = c;
    return c;
  }
}
