/**
 * "Open WAV…": sends the file to the worker for the same analysis as `spanmeter analyze`, and says what
 * came of it in one line. The recording view is shown when an analysis arrives and hidden on request.
 */
import { useCallback, useEffect, useMemo, useState } from 'react';
import { A4_HZ } from '../../../dsp/math/index.ts';
import { parsePlan } from '../../../dsp/calibration/index.ts';
import type { EngineClient } from '../engine/client.ts';
import type { EngineView } from '../engine/client.ts';
import type { SetupOptions } from '../lib/setup.ts';

/**
 * Settle time used when a recording is analysed, s: `analyzeRecording`'s default, the same as
 * `spanmeter analyze` without `--settle` (dsp/recording/recording.ts).
 */
export const RECORDING_SETTLE_SECONDS = 0.5;

/** A one-line status of the last opened file. */
export interface WavStatus {
  readonly kind: 'info' | 'error';
  readonly text: string;
}

/**
 * @param client - The engine.
 * @param view - The engine's view (its `wav` part).
 * @param planText - The plan, whose voltages map the recording's steps.
 * @param channelIndex - Input channel, 0-based (the request carries its number, from 1).
 * @param setup - Clock correction, fit range and input network.
 */
export function useWavAnalysis(
  client: EngineClient,
  view: EngineView,
  planText: string,
  channelIndex: number,
  setup: SetupOptions,
) {
  const [planProblem, setPlanProblem] = useState<string | null>(null);
  const [showRecording, setShowRecording] = useState(false);

  const openWav = useCallback(
    async (file: File | null): Promise<boolean> => {
      if (!file) return false;
      const p = parsePlan(planText);
      if (p.kind !== 'ok') {
        setPlanProblem(
          `${file.name} was not analysed: the plan’s voltages are needed to map the steps (${p.message}).`,
        );
        return true;
      }
      setPlanProblem(null);
      // The File itself goes to the worker, which reads it in slices: a recording of any length.
      client.send({
        type: 'wav-analyze',
        file,
        fileName: file.name,
        request: {
          points: [...p.volts],
          channel: channelIndex + 1,
          settleSeconds: RECORDING_SETTLE_SECONDS,
          a4Hz: A4_HZ,
          clockPpm: setup.clockPpm,
          ...(setup.fitFromVolts === undefined ? {} : { fitFromVolts: setup.fitFromVolts }),
          ...(setup.fitToVolts === undefined ? {} : { fitToVolts: setup.fitToVolts }),
          ...(setup.network === undefined ? {} : { network: setup.network }),
          ...(setup.scalePivotVolts === undefined ? {} : { scalePivotVolts: setup.scalePivotVolts }),
          ...(setup.toleranceCents === undefined ? {} : { toleranceCents: setup.toleranceCents }),
        },
      });
      return true;
    },
    [client, planText, channelIndex, setup],
  );

  useEffect(
    () =>
      client.onMessage((m) => {
        if (m.type === 'wav-done' && m.outcome.kind === 'ok') setShowRecording(true);
      }),
    [client],
  );

  const wavOk =
    view.wav?.outcome?.kind === 'ok' ? { fileName: view.wav.fileName, ...view.wav.outcome } : null;
  const recordingView = showRecording && wavOk ? wavOk : null;

  const status = useMemo((): WavStatus | null => {
    if (planProblem) return { kind: 'error', text: planProblem };
    const w = view.wav;
    if (!w) return null;
    const o = w.outcome;
    if (!o) return { kind: 'info', text: `Analysing ${w.fileName}…` };
    if (o.kind === 'ok') {
      const n = o.analysis.steps.length;
      return {
        kind: 'info',
        text: `${w.fileName}: ${o.file.durationSeconds.toFixed(1)} s at ${o.file.sampleRateHz} Hz, channel ${o.file.channelNumber} of ${o.file.channelCount}: ${n} step${n === 1 ? '' : 's'} measured.`,
      };
    }
    const hint =
      o.code === 'plateau-count-mismatch'
        ? ' Set the plan’s voltages to the ones the recording steps through, then open it again.'
        : '';
    return { kind: 'error', text: `${w.fileName} gave no analysis: ${o.message}.${hint}` };
  }, [view.wav, planProblem]);

  return { openWav, status, wavOk, recordingView, setShowRecording };
}
