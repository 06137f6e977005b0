/**
 * Charts drawn as SVG, sized by their container's width through the viewBox: the strip chart of the live
 * pitch, the per-step error chart, the comparison of two runs and the drift chart.
 */
import { nearestNote } from '../../../dsp/math/index.ts';
import type { HistoryPoint } from '../engine/client.ts';
import { HISTORY_SECONDS } from '../engine/client.ts';
import { niceRange, ticks } from '../lib/scale.ts';

interface Frame {
  readonly w: number;
  readonly h: number;
  readonly left: number;
  readonly right: number;
  readonly top: number;
  readonly bottom: number;
}

function frame(w: number, h: number): Frame {
  return { w, h, left: 52, right: 12, top: 22, bottom: 26 };
}

function sx(f: Frame, x0: number, x1: number) {
  return (x: number) => f.left + ((x - x0) / (x1 - x0 || 1)) * (f.w - f.left - f.right);
}
function sy(f: Frame, y0: number, y1: number) {
  return (y: number) => f.top + (1 - (y - y0) / (y1 - y0 || 1)) * (f.h - f.top - f.bottom);
}

function Axes(props: {
  f: Frame;
  x: [number, number];
  y: [number, number];
  xLabel: string;
  yLabel: string;
  xFormat?: (v: number) => string;
  xTicks?: number[];
}) {
  const { f } = props;
  const X = sx(f, props.x[0], props.x[1]);
  const Y = sy(f, props.y[0], props.y[1]);
  const yt = ticks(props.y[0], props.y[1], 5);
  const xt = props.xTicks ?? ticks(props.x[0], props.x[1], 8);
  const fmt = props.xFormat ?? ((v: number) => String(Number(v.toPrecision(4))));
  return (
    <g className="axes">
      {yt.map((v) => (
        <g key={`y${v}`}>
          <line x1={f.left} x2={f.w - f.right} y1={Y(v)} y2={Y(v)} className={v === 0 ? 'zero' : 'grid'} />
          <text x={f.left - 6} y={Y(v) + 4} textAnchor="end">
            {String(Number(v.toPrecision(3))).replace('-', '\u2212')}
          </text>
        </g>
      ))}
      {xt
        // Leave room for the axis label at the right-hand end.
        .filter((v) => !props.xLabel || X(v) < f.w - f.right - 16)
        .map((v) => (
          <text key={`x${v}`} x={X(v)} y={f.h - 8} textAnchor="middle">
            {fmt(v)}
          </text>
        ))}
      <text x={f.w - f.right} y={f.h - 8} textAnchor="end" className="axis-label">
        {props.xLabel}
      </text>
      <text x={f.left} y={13} className="axis-label">
        {props.yLabel}
      </text>
    </g>
  );
}

/** Cents of the live pitch over the last ten seconds, against the latest reading's nearest note. */
export function StripChart(props: { history: readonly HistoryPoint[]; now: number; height?: number }) {
  const f = frame(600, props.height ?? 170);
  const { history } = props;
  const last = history[history.length - 1];
  const ref = last ? nearestNote(last.hz).noteHz : 440;
  const pts = history.map((p) => ({ t: p.t, c: 1200 * Math.log2(p.hz / ref) }));
  const recent = pts.filter((p) => Math.abs(p.c) < 600);
  const [y0, y1] = niceRange(
    recent.map((p) => p.c),
    1,
  );
  const t1 = Math.max(props.now, last?.t ?? 0);
  const t0 = t1 - HISTORY_SECONDS;
  const X = sx(f, t0, t1);
  const Y = sy(f, y0, y1);
  const clampY = (c: number) => Y(Math.max(y0, Math.min(y1, c)));
  const d = pts
    .filter((p) => p.t >= t0)
    .map((p, i) => `${i === 0 ? 'M' : 'L'}${X(p.t).toFixed(1)},${clampY(p.c).toFixed(1)}`)
    .join('');
  const xTicks = [0, 2, 4, 6, 8, 10].map((k) => t1 - HISTORY_SECONDS + k);
  return (
    <svg
      className="chart strip"
      viewBox={`0 0 ${f.w} ${f.h}`}
      role="img"
      aria-label="Cents over the last ten seconds"
    >
      <Axes
        f={f}
        x={[t0, t1]}
        y={[y0, y1]}
        xTicks={xTicks}
        xFormat={(v) => `${String(Math.round(v - t1)).replace('-', '\u2212')} s`}
        xLabel=""
        yLabel={last ? `¢ from ${nearestNote(last.hz).name}` : '¢'}
      />
      {d && <path d={d} className="trace" />}
      {pts.length === 0 && (
        <text x={f.w / 2} y={f.h / 2} textAnchor="middle" className="empty">
          No pitch yet
        </text>
      )}
    </svg>
  );
}

/** One step for the error chart. */
export interface ChartStep {
  readonly volts: number;
  readonly centsFromIdeal: number;
  readonly intervalErrorCents: number | null;
  readonly uncertaintyCents: number;
}

/** Cents from the ideal line per step (line and points) and each interval's error (bars). */
export function StepChart(props: {
  steps: readonly ChartStep[];
  planVolts: readonly number[];
  height?: number;
}) {
  const f = frame(520, props.height ?? 230);
  // In voltage order, whatever order they were played in: each interval bar sits between a step and
  // the next lower voltage (dsp/calibration/table.ts takes the interval the same way).
  const steps = [...props.steps].sort((a, b) => a.volts - b.volts);
  const vs = props.planVolts.length > 0 ? props.planVolts : [0, 1];
  const xLo = Math.min(...vs) - 0.5;
  const xHi = Math.max(...vs) + 0.5;
  const values = steps.flatMap((s) => [
    s.centsFromIdeal,
    ...(s.intervalErrorCents === null ? [] : [s.intervalErrorCents]),
  ]);
  const [y0, y1] = niceRange(values, 2);
  const X = sx(f, xLo, xHi);
  const Y = sy(f, y0, y1);
  const d = steps
    .map((s, i) => `${i === 0 ? 'M' : 'L'}${X(s.volts).toFixed(1)},${Y(s.centsFromIdeal).toFixed(1)}`)
    .join('');
  const barW = Math.max(6, Math.min(26, ((f.w - f.left - f.right) / Math.max(2, vs.length + 1)) * 0.35));
  return (
    <svg
      className="chart steps"
      viewBox={`0 0 ${f.w} ${f.h}`}
      role="img"
      aria-label="Error per step and per interval"
    >
      <Axes
        f={f}
        x={[xLo, xHi]}
        y={[y0, y1]}
        xTicks={[...vs]}
        xFormat={(v) => `${Number(v.toPrecision(4))}`}
        xLabel="V"
        yLabel="¢"
      />
      {steps.map((s, i) => {
        if (s.intervalErrorCents === null || i === 0) return null;
        const prev = steps[i - 1];
        const xm = X((s.volts + prev.volts) / 2);
        const ya = Y(0);
        const yb = Y(s.intervalErrorCents);
        return (
          <rect
            key={`b${i}`}
            className="bar"
            x={xm - barW / 2}
            width={barW}
            y={Math.min(ya, yb)}
            height={Math.max(1, Math.abs(yb - ya))}
          />
        );
      })}
      {d && <path d={d} className="trace ideal" />}
      {steps.map((s, i) => (
        <circle key={`p${i}`} cx={X(s.volts)} cy={Y(s.centsFromIdeal)} r={4.5} className="dot" />
      ))}
      <g className="legend" transform={`translate(${f.w - f.right - 250},2)`}>
        <circle cx={5} cy={6} r={4} className="dot" />
        <text x={14} y={10}>
          ¢ from ideal
        </text>
        <rect x={110} y={1} width={10} height={10} className="bar" />
        <text x={125} y={10}>
          interval error ¢
        </text>
      </g>
      {steps.length === 0 && (
        <text x={f.w / 2} y={f.h / 2} textAnchor="middle" className="empty">
          Steps appear here as they are captured
        </text>
      )}
    </svg>
  );
}

/** A labelled series of (volts, cents from ideal). */
export interface CompareSeries {
  readonly label: string;
  readonly points: readonly { readonly volts: number; readonly cents: number }[];
}

/** Two (or more) runs of a unit on one chart: before and after trimming. */
export function CompareChart(props: { series: readonly CompareSeries[] }) {
  const f = frame(560, 240);
  const all = props.series.flatMap((s) => s.points);
  const vs = all.map((p) => p.volts);
  const xLo = (vs.length ? Math.min(...vs) : 0) - 0.5;
  const xHi = (vs.length ? Math.max(...vs) : 1) + 0.5;
  const [y0, y1] = niceRange(
    all.map((p) => p.cents),
    2,
  );
  const X = sx(f, xLo, xHi);
  const Y = sy(f, y0, y1);
  return (
    <svg className="chart compare" viewBox={`0 0 ${f.w} ${f.h}`} role="img" aria-label="Runs compared">
      <Axes f={f} x={[xLo, xHi]} y={[y0, y1]} xLabel="V" yLabel="¢ from ideal" />
      {props.series.map((s, k) => (
        <g key={k} className={`series s${k}`}>
          <path
            d={s.points
              .map((p, i) => `${i === 0 ? 'M' : 'L'}${X(p.volts).toFixed(1)},${Y(p.cents).toFixed(1)}`)
              .join('')}
            className="trace"
          />
          {s.points.map((p, i) => (
            <circle key={i} cx={X(p.volts)} cy={Y(p.cents)} r={4} className="dot" />
          ))}
          <text x={f.left + 8} y={f.top + 14 + 16 * k} textAnchor="start" className="legend-text">
            {s.label}
          </text>
        </g>
      ))}
    </svg>
  );
}

/** Cents against time while holding one voltage. */
export function DriftChart(props: { points: readonly { t: number; cents: number }[] }) {
  const f = frame(560, 230);
  const ts = props.points.map((p) => p.t);
  const t1 = Math.max(60, ...ts);
  const [y0, y1] = niceRange(
    props.points.map((p) => p.cents),
    0.5,
  );
  const X = sx(f, 0, t1);
  const Y = sy(f, y0, y1);
  const d = props.points
    .map((p, i) => `${i === 0 ? 'M' : 'L'}${X(p.t).toFixed(1)},${Y(p.cents).toFixed(1)}`)
    .join('');
  return (
    <svg className="chart drift" viewBox={`0 0 ${f.w} ${f.h}`} role="img" aria-label="Drift against time">
      <Axes
        f={f}
        x={[0, t1]}
        y={[y0, y1]}
        xFormat={(v) => (t1 > 180 ? `${Math.round(v / 60)} min` : `${Math.round(v)} s`)}
        xLabel=""
        yLabel="¢ from start"
      />
      {d && <path d={d} className="trace" />}
      {props.points.length === 0 && (
        <text x={f.w / 2} y={f.h / 2} textAnchor="middle" className="empty">
          Collecting one point a second…
        </text>
      )}
    </svg>
  );
}
