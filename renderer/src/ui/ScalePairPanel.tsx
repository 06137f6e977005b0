/**
 * Scale pair: the user alternates between two voltages while turning the scale trimmer; the interval
 * error is shown live with the way to turn (dsp/advice/advice.ts scalePairIntervalError). An instruction comes
 * only from two pitches both settled after the pair was opened, and only when their interval is near the
 * pair's (the unexpected-pitch guard, engine/core.ts).
 */
import { useState } from 'react';
import type { ScalePairConfig, ScalePairView } from '../engine/protocol.ts';
import { numberOrNull } from '../lib/fields.ts';
import { formatCents, formatHz } from '../../../dsp/format/index.ts';
import { scalePivotVolts } from '../../../dsp/advice/index.ts';
import { NumberField } from './NumberField.tsx';

const VOLT_RULE = { min: -12, max: 12, unit: 'V', optional: false } as const;
const TOL_RULE = { min: 0.01, max: 100, unit: '¢', optional: false } as const;

/** The one status line of the pair (no internal codes). */
export function pairStatusText(v: ScalePairView | null): string {
  if (!v) return 'Waiting for the input.';
  if (v.unexpected) {
    return `Unexpected pitch: the two pitches are ${Math.round(v.unexpected.measuredCents)} ¢ apart, the pair expects ${Math.round(v.unexpected.expectedCents)} ¢. Check both voltages; no instruction until they match.`;
  }
  if (v.status === 'no-signal') return 'No pitch heard: check the input and the level.';
  if (!v.low || !v.high)
    return v.status === 'settled'
      ? 'One voltage settled: now switch to the other.'
      : 'Waiting for the pitch to settle at the first voltage.';
  return v.status === 'settled' ? 'Both voltages settled.' : 'Settling after a switch…';
}

/** Both sides' pitches, Hz, when both have settled. */
type PairHz = { readonly low: number; readonly high: number };

/**
 * The voltage the scale trimmer turns about, from how far each side moved since `first` (derived in
 * `scalePivotVolts`, dsp/advice/advice.ts), or null while the two moves are too close to tell apart.
 */
export function pairPivotVolts(
  first: PairHz,
  now: PairHz,
  voltsLow: number,
  voltsHigh: number,
): number | null {
  const moved = (a: number, b: number) => 1200 * Math.log2(b / a);
  try {
    return scalePivotVolts(voltsLow, voltsHigh, moved(first.low, now.low), moved(first.high, now.high));
  } catch {
    return null;
  }
}

export function ScalePairPanel(props: {
  view: ScalePairView | null;
  config: ScalePairConfig;
  onConfig(c: ScalePairConfig): void;
  onReset(): void;
  /** Puts a measured pivot into the Setup, for the advice. */
  onUsePivot?(volts: number): void;
  simulated: boolean;
}) {
  const [low, setLow] = useState(String(props.config.voltsLow));
  const [high, setHigh] = useState(String(props.config.voltsHigh));
  const [tol, setTol] = useState(String(props.config.toleranceCents));
  const lo = numberOrNull(low, VOLT_RULE);
  const hi = numberOrNull(high, VOLT_RULE);
  const t = numberOrNull(tol, TOL_RULE);
  const order = lo !== null && hi !== null && hi <= lo ? 'must be above the low voltage' : null;
  const valid = lo !== null && hi !== null && t !== null && order === null;
  const changed =
    valid &&
    (lo !== props.config.voltsLow || hi !== props.config.voltsHigh || t !== props.config.toleranceCents);
  const v = props.view;
  const r = v && !v.unexpected ? v.result : null;
  // The first settled pair is where the trimmer started; how far each side has moved since gives its pivot.
  const [first, setFirst] = useState<PairHz | null>(null);
  const now: PairHz | null = r && v?.low && v.high ? { low: v.low.hz, high: v.high.hz } : null;
  if (now && first === null) setFirst(now);
  const pivot =
    now && first ? pairPivotVolts(first, now, props.config.voltsLow, props.config.voltsHigh) : null;
  const pivotShown = pivot !== null && Math.abs(pivot) <= 12 ? Math.round(pivot * 10) / 10 : null;
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
        <NumberField label="Low, V" value={low} onChange={setLow} rule={VOLT_RULE} testId="pair-low" />
        <NumberField
          label="High, V"
          value={high}
          onChange={setHigh}
          rule={VOLT_RULE}
          problem={order}
          testId="pair-high"
        />
        <NumberField label="Tolerance, ± ¢" value={tol} onChange={setTol} rule={TOL_RULE} />
        <button
          className="primary"
          disabled={!valid || !changed}
          onClick={() =>
            valid && props.onConfig({ ...props.config, voltsLow: lo, voltsHigh: hi, toleranceCents: t })
          }
        >
          Use these
        </button>
        <button
          onClick={() => {
            setFirst(null);
            props.onReset();
          }}
        >
          Start over
        </button>
      </div>
      {changed && (
        <p className="message warn small">
          Still using {props.config.voltsLow} and {props.config.voltsHigh} V: press “Use these” to change.
        </p>
      )}
      <div
        className={`pair-big ${r ? (r.withinTolerance ? 'good' : 'adjust') : ''}`}
        data-testid="pair-result"
        data-has-result={String(r !== null)}
        aria-live="polite"
      >
        <div className="pair-error mono">{r ? `${formatCents(r.errorCents)} ¢` : '— ¢'}</div>
        <div className="pair-direction" data-testid="pair-instruction">
          {r
            ? r.direction === 'none'
              ? 'Within tolerance: leave the scale trimmer'
              : r.direction === 'widen'
                ? '↻ Widen the span (octaves are narrow)'
                : '↺ Narrow the span (octaves are wide)'
            : 'No instruction yet'}
        </div>
        {r && <div className="dim">{r.text}</div>}
      </div>
      <div className="pair-sides">
        {(['low', 'high'] as const).map((k) => {
          const side = v?.[k] ?? null;
          return (
            <div key={k} className={`pair-side ${side?.live ? 'live' : ''}`}>
              <div className="dim">
                {k === 'low'
                  ? `Lower pitch (${props.config.voltsLow} V)`
                  : `Higher pitch (${props.config.voltsHigh} V)`}
                {side?.live ? ' · now' : ''}
              </div>
              <div className="mono big">{side ? `${formatHz(side.hz)} Hz` : '—'}</div>
            </div>
          );
        })}
      </div>
      <p className={v?.unexpected ? 'message warn' : 'dim'} role="status" data-testid="pair-status">
        {pairStatusText(v)}
      </p>
      <p className="dim small" data-testid="pair-pivot">
        {pivotShown === null
          ? 'Pivot: turn the scale trimmer a little, and the step that holds still shows here (keep the offset trimmer where it is).'
          : `Pivot: the scale trimmer turns about ${pivotShown.toFixed(1)} V (from how far each side moved since the first reading; a drifting unit blurs it).`}{' '}
        {pivotShown !== null && props.onUsePivot && (
          <button onClick={() => props.onUsePivot?.(pivotShown)} data-testid="pair-use-pivot">
            Use {pivotShown.toFixed(1)} V for the advice
          </button>
        )}
      </p>
    </div>
  );
}
