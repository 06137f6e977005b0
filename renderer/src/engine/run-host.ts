/**
 * The host side of a calibration run (`dsp/run.ts`), as pure functions: feed a reading, answer the
 * run's request for a precise capture measurement, and move a saved run onto a new stream clock.
 */
import { createPlateauState } from '../../../dsp/plateau.ts';
import type { PitchOk, PitchReading } from '../../../dsp/reading.ts';
import { restoreInfiniteDof, runReducer, type HostMeasurement, type RunState } from '../../../dsp/run.ts';

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
 * A run moved onto a new stream clock (a restart, a new input device): whatever depended on the old
 * clock (the open capture window, the plateau detector, the pending warning, the time of the latest
 * reading) is dropped and the run is paused, so nothing is captured until the user resumes. Finished
 * and aborted runs keep their phase. Captures are kept.
 *
 * @param state - A run (for example restored from the autosave).
 * @returns A valid run state (see `validateRunState`).
 */
export function rebaseRun(state: RunState): RunState {
  const s: RunState = restoreInfiniteDof(JSON.parse(JSON.stringify(state)));
  const over = s.phase === 'finished' || s.phase === 'aborted';
  s.detector = createPlateauState();
  s.capture = null;
  s.pendingCapture = null;
  s.warning = null;
  s.capturedAtSeconds = null;
  s.lastSeconds = null;
  s.heardHz = null;
  s.progress = 0;
  s.notes = [];
  if (!over) {
    s.phase = 'paused';
    // A step left in its 'captured' hold moves on when the run resumes.
    if (s.steps[s.current]?.status !== 'pending') {
      const next = s.steps.findIndex((st, i) => i > s.current && st.status === 'pending');
      const any = s.steps.findIndex((st) => st.status === 'pending');
      if (next >= 0) s.current = next;
      else if (any >= 0) s.current = any;
      else s.phase = 'finished';
    }
  }
  return s;
}
