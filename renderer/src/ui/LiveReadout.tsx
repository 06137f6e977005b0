/**
 * The big readout: frequency to a hundredth of a cent, nearest note and cents (middle C = C4), the
 * reading's uncertainty, and whether the pitch has settled.
 */
import { applyClockPpm } from '../../../dsp/io/index.ts';
import { nearestNote } from '../../../dsp/math/index.ts';
import type { PitchReading } from '../../../dsp/pitch/index.ts';
import { formatCents, formatHz, formatUncertainty } from '../../../dsp/format/index.ts';

const REASONS: Record<string, string> = {
  silent: 'too quiet to measure',
  clipped: 'clipped input',
  'no-pitch': 'no steady pitch',
  'below-range': 'below the measurable range',
  'above-range': 'above the measurable range',
  'warming-up': 'listening…',
  'bad-samples': 'bad samples in the input',
};

export function LiveReadout(props: {
  reading: PitchReading | null;
  settled: boolean;
  streamSeconds: number;
  /** The interface clock correction from the Setup, ppm: absolute readings carry it. */
  clockPpm: number;
}) {
  const r = props.reading;
  const ok = r && r.kind === 'ok' ? r : null;
  const hz = ok ? applyClockPpm(ok.hz, props.clockPpm) : null;
  const note = hz !== null ? nearestNote(hz) : null;
  return (
    <section
      className="panel readout"
      aria-label="Live reading"
      data-testid="readout"
      data-stream-seconds={String(props.streamSeconds)}
    >
      <div className="hz" data-testid="live-hz" data-hz={hz !== null ? String(hz) : ''}>
        {hz !== null ? formatHz(hz) : '—'}
        <span className="unit">Hz</span>
      </div>
      <div className="note-line">
        <span className="note" data-testid="live-note">
          {note ? note.name : r ? (REASONS[r.kind === 'none' ? r.reason : ''] ?? '') : 'no input'}
        </span>
        {note && (
          <span className="cents" data-testid="live-cents">
            {formatCents(note.cents)} ¢
          </span>
        )}
        <span
          className={`settle ${props.settled && ok ? 'on' : ''}`}
          data-testid="settled"
          data-settled={String(props.settled && !!ok)}
        >
          {props.settled && ok ? '● Settled' : '○ Moving'}
        </span>
      </div>
      <div className="sub">
        <span>
          ± {ok ? formatUncertainty(ok.uncertaintyCents) : '—'} ¢ (1σ)
          {ok && ok.hz < 20 && (
            <span data-testid="live-window">
              {' '}
              · over the last {ok.windowSeconds.toFixed(1)} s (ten cycles), so a change shows slowly
            </span>
          )}
        </span>
        <span>
          {props.clockPpm !== 0 ? `clock ${props.clockPpm > 0 ? '+' : ''}${props.clockPpm} ppm · ` : ''}A4 =
          440 Hz · middle C = C4 = 261.63 Hz
        </span>
      </div>
    </section>
  );
}
