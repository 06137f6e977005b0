/**
 * Warm-up and drift: hold one voltage and watch cents against time, the drift rate and the estimated
 * warm-up (dsp/calibration/drift.ts analyzeDrift; warm when the drift stays under 0.1 cent per minute, common practice).
 */
import { useState } from 'react';
import type { DriftView } from '../engine/protocol.ts';
import { numberOrNull, type NumberRule } from '../lib/fields.ts';
import { formatCents, formatClock } from '../../../dsp/format/index.ts';
import { DriftChart } from './charts.tsx';
import { DriftLogBar, type DriftKeeper } from './DriftLogBar.tsx';
import { NumberField } from './NumberField.tsx';

/** The held voltage: the span of the scale pair's fields (ScalePairPanel), V. */
export const DRIFT_VOLT_RULE: NumberRule = { min: -12, max: 12, unit: 'V', optional: false };
/**
 * The window the drift rate is fitted over, s: at least 10 s (fewer readings give no useful slope), at
 * most an hour (common practice, no source: a warm-up is judged over minutes).
 */
export const DRIFT_WINDOW_RULE: NumberRule = { min: 10, max: 3600, unit: 's', optional: false };

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
  // Only the values the fields show as valid are ever used (lib/fields.ts).
  const heldVolts = numberOrNull(volts, DRIFT_VOLT_RULE);
  const windowSeconds = numberOrNull(win, DRIFT_WINDOW_RULE);
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
        <NumberField
          label="Hold at, V"
          value={volts}
          onChange={setVolts}
          rule={DRIFT_VOLT_RULE}
          disabled={!!v}
          testId="drift-volts"
        />
        <NumberField
          label="Rate window, s"
          value={win}
          onChange={setWin}
          rule={DRIFT_WINDOW_RULE}
          disabled={!!v}
          testId="drift-window"
        />
        {v ? (
          <button onClick={props.onStop} data-testid="drift-stop">
            Stop
          </button>
        ) : (
          <button
            className="primary"
            disabled={heldVolts === null || windowSeconds === null}
            onClick={() => {
              if (heldVolts !== null && windowSeconds !== null) props.onStart(heldVolts, windowSeconds);
            }}
            data-testid="drift-start"
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
