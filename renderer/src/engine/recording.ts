/**
 * A WAV recording of a stepped oscillator, analysed the way a live run is: the samples are streamed
 * through the live tracker (`dsp/stream.ts`) faster than real time, the readings drive the calibration
 * run (`dsp/run.ts`), which finds the plateaus (`dsp/plateau.ts`) and asks for the precise average of
 * each capture window, answered from the tracker's history at once.
 */
import type { PitchOk } from '../../../dsp/reading.ts';
import { createRun, type RunOptionsInput, type RunState } from '../../../dsp/run.ts';
import { PitchTracker } from '../../../dsp/stream.ts';
import type { CaptureDetail } from '../lib/analysis.ts';
import { feedReading } from './run-host.ts';
import type { PlanSpec } from './protocol.ts';

/** Result of {@link analyzeRecording}. */
export interface RecordingAnalysis {
  readonly state: RunState;
  readonly details: Record<number, CaptureDetail>;
  /** Stream time each step's capture was stored, seconds. */
  readonly capturedAt: (number | null)[];
  readonly readings: number;
  readonly durationSeconds: number;
}

/** Detail of a precise measurement, for the JSON export. */
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
 * Runs a plan over a recording.
 *
 * @param samples - One channel, ±1 full scale.
 * @param sampleRateHz - Its sample rate, Hz (8 kHz to 384 kHz).
 * @param plan - The voltages the recording steps through, in order.
 * @param options - Run options (capture window etc.).
 * @param onProgress - Called now and then with the fraction done, 0…1.
 * @throws RangeError for a sample rate or plan the engine refuses (the message names it).
 */
export function analyzeRecording(
  samples: Float32Array,
  sampleRateHz: number,
  plan: PlanSpec,
  options: RunOptionsInput = {},
  onProgress?: (fraction: number) => void,
): RecordingAnalysis {
  const tracker = new PitchTracker({ sampleRateHz, historySeconds: 8 });
  let state = createRun({ id: plan.id, label: plan.label, volts: plan.volts }, options);
  const details: Record<number, CaptureDetail> = {};
  const capturedAt: (number | null)[] = plan.volts.map(() => null);
  const measure = (a: number, b: number) => tracker.averageOfSpan(a, b);
  let readings = 0;
  const block = 4096;
  let nextProgress = 0;
  for (let i = 0; i < samples.length; i += block) {
    const view = samples.subarray(i, Math.min(samples.length, i + block));
    tracker.push(view, (r) => {
      readings++;
      if (state.phase === 'finished' || state.phase === 'aborted') return;
      const f = feedReading(state, r, measure);
      state = f.state;
      if (f.measured && f.capturedStep !== null) details[f.capturedStep] = captureDetail(f.measured);
      if (f.capturedStep !== null) capturedAt[f.capturedStep] = r.timeSeconds;
    });
    if (onProgress && i >= nextProgress) {
      onProgress(i / samples.length);
      nextProgress += samples.length / 20;
    }
  }
  onProgress?.(1);
  return { state, details, capturedAt, readings, durationSeconds: samples.length / sampleRateHz };
}
