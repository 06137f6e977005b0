/**
 * Two-point scale trim: the user alternates between two voltages while turning the scale trimmer; the
 * interval error is shown live with the way to turn (dsp/advice.ts twoPointIntervalError).
 */
import { useState } from 'react';
import type { TwoPointConfig, TwoPointView } from '../engine/protocol.ts';
import { formatCents, formatHz } from '../lib/format.ts';

export function TwoPointPanel(props: {
  view: TwoPointView | null;
  config: TwoPointConfig;
  onConfig(c: TwoPointConfig): void;
  onReset(): void;
  simulated: boolean;
}) {
  const [low, setLow] = useState(String(props.config.voltsLow));
  const [high, setHigh] = useState(String(props.config.voltsHigh));
  const [tol, setTol] = useState(String(props.config.toleranceCents));
  const lo = Number(low);
  const hi = Number(high);
  const t = Number(tol);
  const valid = Number.isFinite(lo) && Number.isFinite(hi) && hi > lo && Number.isFinite(t) && t >= 0;
  const r = props.view?.result ?? null;
  return (
    <div className="pair-panel">
      <p className="intro">
        Switch the reference between the two voltages while you turn the <strong>scale</strong> trimmer. Leave
        the HF trimmer alone.{' '}
        {props.simulated
          ? 'The simulator switches every few seconds by itself; move its Scale error knob as the trimmer.'
          : ''}
      </p>
      <div className="row">
        <label className="field">
          <span>Low V</span>
          <input value={low} onChange={(e) => setLow(e.target.value)} inputMode="decimal" />
        </label>
        <label className="field">
          <span>High V</span>
          <input value={high} onChange={(e) => setHigh(e.target.value)} inputMode="decimal" />
        </label>
        <label className="field">
          <span>Tolerance ¢</span>
          <input value={tol} onChange={(e) => setTol(e.target.value)} inputMode="decimal" />
        </label>
        <button
          className="primary"
          disabled={!valid}
          onClick={() => props.onConfig({ ...props.config, voltsLow: lo, voltsHigh: hi, toleranceCents: t })}
        >
          Use these
        </button>
        <button onClick={props.onReset}>Start over</button>
      </div>
      <div
        className={`pair-big ${r ? (r.withinTolerance ? 'good' : 'adjust') : ''}`}
        data-testid="pair-result"
      >
        <div className="pair-error mono">{r ? `${formatCents(r.errorCents)} ¢` : '— ¢'}</div>
        <div className="pair-direction">
          {r
            ? r.direction === 'none'
              ? 'Within tolerance: leave the scale trimmer'
              : r.direction === 'widen'
                ? '↻ Widen the span (octaves are narrow)'
                : '↺ Narrow the span (octaves are wide)'
            : 'Waiting for both voltages to settle'}
        </div>
        {r && <div className="dim">{r.text}</div>}
      </div>
      <div className="pair-sides">
        {(['low', 'high'] as const).map((k) => {
          const side = props.view?.[k] ?? null;
          return (
            <div key={k} className={`pair-side ${side?.live ? 'live' : ''}`}>
              <div className="dim">
                {k === 'low' ? `Low, ${props.config.voltsLow} V` : `High, ${props.config.voltsHigh} V`}
                {side?.live ? ' · live' : ''}
              </div>
              <div className="mono big">{side ? `${formatHz(side.hz)} Hz` : '—'}</div>
            </div>
          );
        })}
      </div>
      <p className="dim">Status: {props.view?.status ?? 'no signal'}</p>
    </div>
  );
}
