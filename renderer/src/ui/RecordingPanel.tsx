/**
 * A recorded calibration pass opened with "Open WAV…": the steps `analyzeRecording` found
 * (dsp/recording/recording.ts, the same analysis as `spanmeter analyze`), their error table, chart, fit and
 * advice. The live run, if there is one, is kept aside and comes back with "Back to the run".
 */
import type { ReactNode } from 'react';
import type { RecordingAnalysisOk } from '../../../dsp/recording/index.ts';
import type { WavFileInfo } from '../engine/wav-analysis.ts';
import type { RunAnalysis } from '../lib/analysis.ts';
import {
  formatCents,
  formatHz,
  formatUncertainty,
  formatVolts,
  hzColumnDecimals,
} from '../../../dsp/format/index.ts';
import { StepChart } from './charts.tsx';
import { AdviceList, ErrorTableHead, FitSummary, StepFlags, resultFromAnalysis } from './results/index.ts';

export interface RecordingPanelProps {
  fileName: string;
  file: WavFileInfo;
  recording: RecordingAnalysisOk;
  /** The same analysis in the run views' shape (`recordingAsRunAnalysis`). */
  analysis: RunAnalysis;
  /** Set when a live run is kept aside; shows "Back to the run". */
  onBackToRun: (() => void) | null;
  onClose(): void;
  /** The "Open WAV…" control, to open another file from here. */
  openWav: ReactNode;
  /** Opens the scale pair from a piece of advice. */
  onCheckAdvice?(trimmer: 'scale' | 'hf'): void;
}

export function RecordingPanel(p: RecordingPanelProps) {
  const r = p.recording;
  const hzDecimals = hzColumnDecimals(r.steps.map((s) => s.hz));
  const result = resultFromAnalysis(p.analysis);
  const f = p.file;
  return (
    <div className="run-panel" data-testid="recording-panel">
      <div className="row plan-row">
        <div className="grow">
          <strong>{p.fileName}</strong>
          <div className="dim">
            {f.durationSeconds.toFixed(1)} s at {f.sampleRateHz.toLocaleString('en-US')} Hz, channel{' '}
            {f.channelNumber} of {f.channelCount} · {r.steps.length} steps · settle {r.settleSeconds} s · A4 ={' '}
            {r.a4Hz} Hz
          </div>
        </div>
        {p.openWav}
        {p.onBackToRun && (
          <button onClick={p.onBackToRun} data-testid="back-to-run">
            Back to the run
          </button>
        )}
        <button onClick={p.onClose} className="quiet" data-testid="close-recording">
          Close recording
        </button>
      </div>
      <div className="run-grid">
        <div className="table-wrap">
          <table className="error-table" data-testid="error-table">
            <caption className="sr-only">Steps found in the recording, in order of time</caption>
            <ErrorTableHead last="At, s" />
            <tbody>
              {r.steps.map((s) => (
                <tr
                  key={s.index}
                  data-testid="step-row"
                  data-step={s.index}
                  data-volts={String(s.volts)}
                  data-hz={String(s.hz)}
                  data-uncertainty-cents={String(s.uncertaintyCents)}
                  data-source={s.source}
                  data-start-seconds={String(s.startSeconds)}
                  data-end-seconds={String(s.endSeconds)}
                >
                  <td>
                    {s.index + 1}
                    <StepFlags flags={s.flags} />
                  </td>
                  <td>{formatVolts(s.volts, false)}</td>
                  <td>{s.measuredVolts === null ? '' : formatVolts(s.measuredVolts, false)}</td>
                  <td className="num mono">{formatHz(s.hz, hzDecimals)}</td>
                  <td>
                    {s.note.name} <span className="dim">{formatCents(s.note.cents, 1)}</span>
                  </td>
                  <td className="num mono">{formatCents(s.centsFromIdeal)}</td>
                  <td className="num mono">{formatCents(s.intervalErrorCents)}</td>
                  <td className="num mono dim">{formatUncertainty(s.uncertaintyCents)}</td>
                  <td className="num mono dim">
                    {s.startSeconds.toFixed(1)}–{s.endSeconds.toFixed(1)}
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      </div>
      <div className="chart-fit">
        <div className="chart-wrap">
          <StepChart
            planVolts={r.steps.map((s) => s.measuredVolts ?? s.volts ?? 0)}
            steps={r.table?.rows ?? []}
          />
        </div>
        <FitSummary result={result} />
      </div>
      <AdviceList result={result} onCheck={p.onCheckAdvice} />
    </div>
  );
}
