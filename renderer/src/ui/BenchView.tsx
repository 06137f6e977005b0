/**
 * The bench view: full screen, readable from a metre away while the hands are on the trimmers. On the
 * scale pair it shows the interval error with the way to turn and the target; elsewhere the live pitch
 * against its nearest note. Below, the trend of that figure over the last 30 seconds. Escape closes it.
 */
import { useEffect, useRef, useState } from 'react';
import { applyClockPpm } from '../../../dsp/io/index.ts';
import { nearestNote } from '../../../dsp/math/index.ts';
import type { EngineView } from '../engine/client.ts';
import type { RunState } from '../../../dsp/calibration/index.ts';
import { formatCents, formatHz, formatVolts } from '../../../dsp/format/index.ts';
import { promptFor } from './RunPanel.tsx';

/** Seconds of trend shown. */
export const BENCH_TREND_SECONDS = 30;

interface Figure {
  /** The error shown, cents, or null when there is none to show. */
  cents: number | null;
  title: string;
  direction: string;
  target: string;
  ok: boolean;
}

function figureOf(
  view: EngineView,
  mode: 'scale-pair' | 'live',
  pairTolerance: number,
  clockPpm: number,
): Figure {
  if (mode === 'scale-pair') {
    const tp = view.scalePair;
    const r = tp && !tp.unexpected ? tp.result : null;
    return {
      cents: r ? r.errorCents : null,
      title: 'Scale pair: interval error',
      direction: !r
        ? tp?.unexpected
          ? 'Unexpected pitch: check both voltages'
          : 'Waiting for both voltages to settle'
        : r.direction === 'none'
          ? 'Within tolerance: leave the scale trimmer'
          : r.direction === 'widen'
            ? '↻ Widen the span'
            : '↺ Narrow the span',
      target: `target 0 ± ${pairTolerance} ¢`,
      ok: r ? r.withinTolerance : false,
    };
  }
  const rd = view.reading;
  if (!rd || rd.kind !== 'ok' || !view.settled) {
    return {
      cents: null,
      title: 'Live pitch',
      direction: rd && rd.kind === 'ok' ? 'Moving: waiting for the pitch to settle' : 'No steady pitch',
      target: 'target: nearest note',
      ok: false,
    };
  }
  const hz = applyClockPpm(rd.hz, clockPpm);
  const n = nearestNote(hz);
  return {
    cents: n.cents,
    title: `Live pitch ${formatHz(hz)} Hz`,
    direction:
      Math.abs(n.cents) < 0.5
        ? `On ${n.name}`
        : n.cents > 0
          ? `Sharp of ${n.name}: lower`
          : `Flat of ${n.name}: raise`,
    target: `target ${n.name} = ${formatHz(n.noteHz)} Hz`,
    ok: Math.abs(n.cents) < 0.5,
  };
}

export function BenchView(props: {
  view: EngineView;
  mode: 'scale-pair' | 'live';
  pairTolerance: number;
  clockPpm: number;
  run: RunState | null;
  simulated: boolean;
  flashing: boolean;
  onClose(): void;
}) {
  const fig = figureOf(props.view, props.mode, props.pairTolerance, props.clockPpm);
  const [trend, setTrend] = useState<{ t: number; c: number }[]>([]);
  const t = props.view.streamSeconds;
  const closeRef = useRef<HTMLButtonElement | null>(null);
  useEffect(() => {
    closeRef.current?.focus();
    const onKey = (e: KeyboardEvent) => {
      if (e.key === 'Escape') props.onClose();
    };
    window.addEventListener('keydown', onKey);
    return () => window.removeEventListener('keydown', onKey);
  }, [props.onClose]);
  useEffect(() => {
    if (fig.cents === null) return;
    const c = fig.cents;
    setTrend((old) => [...old.filter((p) => p.t > t - BENCH_TREND_SECONDS && p.t <= t), { t, c }]);
  }, [t, fig.cents]);
  const pts = trend.filter((p) => p.t > t - BENCH_TREND_SECONDS);
  const span = Math.max(1, ...pts.map((p) => Math.abs(p.c)));
  const W = 600;
  const H = 120;
  const path = pts
    .map((p, i) => {
      const x = W - ((t - p.t) / BENCH_TREND_SECONDS) * W;
      const y = H / 2 - (p.c / span) * (H / 2 - 6);
      return `${i === 0 ? 'M' : 'L'}${x.toFixed(1)},${y.toFixed(1)}`;
    })
    .join('');
  const prompt = props.run && props.mode === 'live' ? promptFor(props.run, props.simulated) : null;
  const step = props.run?.steps[props.run.current];
  return (
    <div
      className={`bench-view ${fig.ok ? 'good' : ''} ${props.flashing ? 'flash' : ''}`}
      role="dialog"
      aria-modal="true"
      aria-label="Bench view"
      data-testid="bench-view"
    >
      <div className="bench-top">
        <span>{fig.title}</span>
        <button ref={closeRef} onClick={props.onClose} data-testid="bench-view-close">
          Close (Esc)
        </button>
      </div>
      <div className="bench-figure mono" data-testid="bench-cents">
        {fig.cents === null ? '—' : `${formatCents(fig.cents, 1)} ¢`}
      </div>
      <div className="bench-direction">{fig.direction}</div>
      <div className="bench-target">{fig.target}</div>
      {prompt && (
        <div className="bench-prompt">
          {prompt.title}
          {step
            ? ` · step ${props.run!.current + 1} of ${props.run!.steps.length} (${formatVolts(step.nominalVolts)})`
            : ''}
          <div className="bench-detail">{prompt.detail}</div>
        </div>
      )}
      <svg
        className="bench-trend"
        viewBox={`0 0 ${W} ${H}`}
        role="img"
        aria-label="Trend over the last 30 seconds"
      >
        <line x1={0} x2={W} y1={H / 2} y2={H / 2} className="zero" />
        {path && <path d={path} className="trace" />}
        <text x={4} y={14} className="axis-text">
          ±{span.toFixed(1)} ¢
        </text>
        <text x={W - 4} y={H - 4} textAnchor="end" className="axis-text">
          last {BENCH_TREND_SECONDS} s
        </text>
      </svg>
    </div>
  );
}
