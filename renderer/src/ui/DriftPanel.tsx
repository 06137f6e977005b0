/**
 * Warm-up and drift: hold one voltage and watch cents against time, the drift rate and the estimated
 * warm-up (dsp/calibration/drift.ts analyzeDrift; warm when the drift stays under 0.1 cent per minute, common practice).
 */
import { useState } from 'react';
import type { DriftView } from '../engine/protocol.ts';
import { formatCents, formatClock } from '../lib/format.ts';
import { DriftChart } from './charts.tsx';
import { DriftLogBar, type DriftKeeper } from './DriftLogBar.tsx';

export function DriftPanel(props: {
  view: DriftView | null;
  onStart(volts: number, windowSeconds: number): void;
  onStop(): void;
  simulated: boolean;
  /** The kept log (autosave, export); absent in tests that render the panel alone. */
  keeper?: DriftKeeper;
}) {
  const [volts, setVolts] = useState('2');
  const [win, setWin] = useState('60');
  const v = props.view;
  const res = v?.result;
  const lastRate = v && v.rates.length > 0 ? v.rates[v.rates.length - 1].centsPerMinute : null;
  return (
    <div className="drift-panel">
      <p className="intro">
        Hold one voltage and leave the oscillator alone. A unit counts as warm when its drift stays under
        about 0.1 ¢ per minute (usually after 15–30 minutes).
      </p>
      <div className="row">
        <label className="field">
          <span>Hold at V</span>
          <input
            value={volts}
            onChange={(e) => setVolts(e.target.value)}
            inputMode="decimal"
            disabled={!!v}
          />
        </label>
        <label className="field">
          <span>Rate window, s</span>
          <input value={win} onChange={(e) => setWin(e.target.value)} inputMode="decimal" disabled={!!v} />
        </label>
        {v ? (
          <button onClick={props.onStop}>Stop</button>
        ) : (
          <button
            className="primary"
            disabled={!Number.isFinite(Number(volts)) || !(Number(win) >= 10)}
            onClick={() => props.onStart(Number(volts), Number(win))}
          >
            Start hold
          </button>
        )}
      </div>
      <div className="drift-grid">
        <DriftChart points={v?.points ?? []} />
        <dl className="drift-facts">
          <dt>Elapsed</dt>
          <dd className="mono">{formatClock(v?.points[v.points.length - 1]?.t ?? 0)}</dd>
          <dt>Drift so far</dt>
          <dd className="mono">
            {v && v.points.length > 0 ? `${formatCents(v.points[v.points.length - 1].cents)} ¢` : '—'}
          </dd>
          <dt>Rate</dt>
          <dd className="mono">{lastRate !== null ? `${formatCents(lastRate, 3)} ¢/min` : '—'}</dd>
          <dt>Warm-up</dt>
          <dd>
            {!res
              ? 'not started'
              : res.kind === 'settled'
                ? `warm after ${formatClock(res.warmUpSeconds)} (rate now ${formatCents(res.driftRateCentsPerMinute, 3)} ¢/min)`
                : res.kind === 'not-yet-settled'
                  ? lastRate !== null && Math.abs(lastRate) < 0.1
                    ? `not warm yet: under 0.1 ¢/min now, and it must stay so for ${formatClock((v?.windowSeconds ?? 60) / 2)}`
                    : 'not warm yet: the rate must fall under 0.1 ¢/min and stay there'
                  : res.kind === 'none'
                    ? `collecting: needs ${v?.windowSeconds ?? 0} s of readings`
                    : res.message}
          </dd>
        </dl>
      </div>
      {props.keeper && <DriftLogBar keeper={props.keeper} />}
    </div>
  );
}
