/**
 * The guided run: plan with its parsed preview, prompt with a settle countdown that says what it waits
 * for, controls on keys, the error table filling in (rows in voltage order, meter cells checked), the
 * per-step chart, the fit summary and the trim advice.
 */
import { useState, type ReactNode } from 'react';
import { PLAN_LIMITS, PLAN_PRESETS, formatPlan, parsePlan } from '../../../dsp/calibration/index.ts';
import { isRunActive, type RunState, type RunStep } from '../../../dsp/calibration/index.ts';
import {
  expectedPitch,
  resolveRunOptions,
  stepSecondsAt,
  SUB_AUDIO_HZ,
} from '../../../dsp/calibration/index.ts';
import type { RunSnapshot, UserRunEvent } from '../engine/protocol.ts';
import { RUN_KEYS, redoTarget } from '../hooks/useRunKeys.ts';
import type { RunAnalysis } from '../lib/analysis.ts';
import { DECIMAL_HINT, meterQuestion, parseNumberField } from '../lib/fields.ts';
import {
  formatCents,
  formatHz,
  formatUncertainty,
  formatVolts,
  hzColumnDecimals,
} from '../../../dsp/format/index.ts';
import { StepChart } from './charts.tsx';
import { AdviceList, ErrorTableHead, FitSummary, StepFlags, resultFromAnalysis } from './results/index.ts';

export { RUN_KEYS };

function Kbd(props: { k: string }) {
  return <kbd>{props.k === ' ' ? 'Space' : props.k.length === 1 ? props.k.toUpperCase() : props.k}</kbd>;
}

/** The creep rate the capture waits on, in words. */
function formatCreep(centsPerSecond: number | null): string {
  if (centsPerSecond === null) return 'measuring its slope';
  return `${Math.abs(centsPerSecond) < 0.001 ? '< 0.001' : Math.abs(centsPerSecond).toFixed(3)} cent/s`;
}

/** The pitch the current step is at: the one expected from the steps captured, else the last one heard, Hz. */
function currentStepHz(s: RunState): number | null {
  const exp = expectedPitch(s, s.current);
  if (exp) return exp.expectedHz;
  const d = s.detector;
  const last = d.cents.length - 1;
  return d.anchorHz !== null && last >= 0 ? d.anchorHz * Math.pow(2, d.cents[last] / 1200) : null;
}

/** Whole seconds, or tenths under ten. */
function formatSeconds(sec: number): string {
  return sec < 10 ? String(Math.round(sec * 10) / 10) : String(Math.round(sec));
}

/**
 * How long a sub-audio step takes, in words, when the current step's pitch is below 20 Hz; else null.
 *
 * @example subAudioNote(run) // 'Below 20 Hz a step takes longer: about 11 s at 2.00 Hz (ten cycles to read the pitch, then ten to capture it).'
 */
export function subAudioNote(s: RunState): string | null {
  const hz = currentStepHz(s);
  if (hz === null || !(hz > 0) || hz >= SUB_AUDIO_HZ) return null;
  return `Below ${SUB_AUDIO_HZ} Hz a step takes longer: about ${Math.round(stepSecondsAt(s.options, hz))} s at ${formatHz(hz, 2)} Hz (ten cycles to read the pitch, then ten to capture it).`;
}

/** The plan's note on sub-audio steps (default run settings): about how long they take at 2 and 8 Hz. */
export function subAudioPlanHint(): string {
  const o = resolveRunOptions();
  return `steps below ${SUB_AUDIO_HZ} Hz (LFO range, down to 2 Hz) take longer: about ${Math.round(stepSecondsAt(o, 2))} s each at 2 Hz, ${Math.round(stepSecondsAt(o, 8))} s at 8 Hz`;
}

/**
 * The prompt line for the run's phase: one source for the run's status text (settle and capture
 * countdowns, why the run is paused, an input not yet open, a capture waiting for the pitch to stop creeping).
 */
export function promptFor(
  s: RunState,
  simulated: boolean,
  why: { pausedReason?: string | null; waitingForInput?: boolean; firstStepHeld?: boolean } = {},
): { title: string; detail: string } {
  const st = s.steps[s.current];
  const v = formatVolts(st?.nominalVolts ?? 0);
  const apply = simulated
    ? `The simulator moves to ${v} by itself.`
    : `Set ${v} at the oscillator’s 1 V/oct input and check it with the meter.`;
  const p = s.options.plateau;
  const slow = s.phase === 'apply-voltage' || s.phase === 'settling' ? subAudioNote(s) : null;
  const andSlow = slow ? ` ${slow}` : '';
  switch (s.phase) {
    case 'apply-voltage':
      return {
        title: `Apply ${v}`,
        detail: why.waitingForInput
          ? `Waiting for the input to open. ${apply}`
          : `${apply} Waiting for a steady pitch.${andSlow}`,
      };
    case 'settling': {
      const left = Math.max(0, (1 - s.progress) * p.settleSeconds);
      return {
        title: `Settling at ${v}`,
        detail: `Hold still: waiting for the pitch to stay within ±${p.maxHalfWidthCents} ¢ for ${p.settleSeconds} s (${left.toFixed(1)} s to go).${andSlow}`,
      };
    }
    case 'capturing': {
      if (s.capture?.firstCloseSeconds != null && s.capture.closedAtSeconds === null) {
        return {
          title: `Capturing ${v}`,
          detail: `Waiting for the pitch to stop creeping (${formatCreep(s.capture.creepCentsPerSecond)}).`,
        };
      }
      // The window is `captureSeconds`, or ten periods of a sub-audio pitch (dsp/calibration/run.ts).
      const span = s.capture ? s.capture.endSeconds - s.capture.startSeconds : s.options.captureSeconds;
      const left = Math.max(0, (1 - s.progress) * span);
      return {
        title: `Capturing ${v}`,
        detail: `Averaging the settled pitch over ${formatSeconds(span)} s${span > s.options.captureSeconds + 1e-9 ? ' (ten cycles of this low pitch)' : ''} (${left.toFixed(1)} s to go).`,
      };
    }
    case 'measuring':
      return { title: `Measuring ${v}`, detail: 'Working out the precise average.' };
    case 'captured':
      return {
        title: `Captured ${v}`,
        detail: st?.capture
          ? `${formatHz(st.capture.hz)} Hz ± ${formatUncertainty(st.capture.uncertaintyCents)} ¢`
          : '',
      };
    case 'confirm-pitch':
      return { title: `Unexpected pitch at ${v}`, detail: 'Answer the question below to go on.' };
    case 'paused':
      if (why.firstStepHeld) {
        return {
          title: 'Waiting for your answer',
          detail: `Is step 1 really ${formatVolts(s.steps[0]?.nominalVolts ?? 0)}? Answer the question below; no later step is taken until then.`,
        };
      }
      return {
        title: 'Paused',
        detail: `${why.pausedReason ? `${why.pausedReason} ` : ''}Step ${s.current + 1} of ${s.steps.length} (${v}) is next.${why.pausedReason ? '' : ' Resume to go on.'}`,
      };
    case 'finished': {
      const c = s.steps.filter((x) => x.status === 'captured').length;
      return { title: 'Run complete', detail: `${c} of ${s.steps.length} steps captured.` };
    }
    case 'aborted':
      return { title: 'Run stopped', detail: 'Start a new run when ready.' };
  }
}

/** What a step's row says before it has a capture (agrees with the prompt). */
export function pendingText(st: RunStep, s: RunState): string {
  if (st.status === 'skipped') return 'skipped';
  if (st.index !== s.current) return 'waiting';
  switch (s.phase) {
    case 'settling':
      return 'settling…';
    case 'capturing':
    case 'measuring':
      return 'capturing…';
    case 'apply-voltage':
      return 'apply the voltage';
    case 'confirm-pitch':
      return 'unexpected pitch: see below';
    case 'paused':
      return 'paused';
    default:
      return 'waiting';
  }
}

/**
 * What the plan field parsed, in words: "8 points, 0 to 7 V, 1 V steps", or why it cannot be used.
 *
 * @example planPreview('0,1,2,3,4,5,6,7') // { ok: true, text: '8 points, 0 to 7 V, 1 V steps' }
 */
export function planPreview(text: string): { ok: boolean; text: string } {
  const raw = text
    .split(/[,;\n]+/)
    .map((x) => x.trim())
    .filter((x) => x !== '');
  if (raw.length > PLAN_LIMITS.maxPoints) {
    return {
      ok: false,
      text: `Too many points: ${raw.length} typed, a plan takes at most ${PLAN_LIMITS.maxPoints}.`,
    };
  }
  const p = parsePlan(text);
  if (p.kind !== 'ok') return { ok: false, text: p.message };
  const v = p.volts;
  const n = v.length;
  const lo = Math.min(...v);
  const hi = Math.max(...v);
  const d = v.slice(1).map((x, i) => x - v[i]);
  const even = d.length > 0 && d.every((x) => Math.abs(x - d[0]) < 1e-9);
  const fmt = (x: number) => String(Number(x.toFixed(4)));
  const order =
    n < 2
      ? ''
      : even
        ? `, ${fmt(Math.abs(d[0]))} V steps`
        : d.every((x) => x > 0)
          ? ', rising'
          : ', in the order typed';
  const dir = n >= 2 && d.every((x) => x < 0) ? ' (played high to low)' : '';
  return { ok: true, text: `${n} point${n === 1 ? '' : 's'}, ${fmt(lo)} to ${fmt(hi)} V${order}${dir}` };
}

export interface RunPanelProps {
  run: RunSnapshot | null;
  analysis: RunAnalysis | null;
  planText: string;
  onPlanText(t: string): void;
  onStart(): void;
  onEvent(e: UserRunEvent): void;
  /** Closes the run (the caller asks first when steps would be lost). */
  onClose(): void;
  simulated: boolean;
  resumeOffer: { text: string; onResume(): void; onDiscard(): void } | null;
  onOpenWav(file: File | null): void;
  /** The last "Open WAV…" status: analysing, done, or why the file gave no analysis. */
  wavStatus: { kind: 'info' | 'error'; text: string } | null;
  /** The Setup disclosure, shown under the plan. */
  setup?: ReactNode;
  /** The first-step question, when open. */
  firstStep?: ReactNode;
  /** True while the run is paused for the first step's question (hooks/useFirstStep.ts). */
  firstStepHeld?: boolean;
  /** Opens the scale pair from a piece of advice. */
  onCheckAdvice?(trimmer: 'scale' | 'hf'): void;
  /** Opens the full-screen bench view. */
  onBenchView?(): void;
}

/**
 * "Open WAV…": a real button (reachable with Tab) that opens a hidden file input (tests set its file
 * with playwright's setInputFiles on `data-testid="open-wav"`).
 */
export function OpenWavControl(props: { onOpenWav(file: File | null): void }) {
  let input: HTMLInputElement | null = null;
  return (
    <>
      <button type="button" onClick={() => input?.click()} data-testid="open-wav-button">
        Open WAV…
      </button>
      <input
        ref={(el) => {
          input = el;
        }}
        type="file"
        accept=".wav,audio/wav,audio/x-wav"
        className="hidden-file"
        tabIndex={-1}
        aria-hidden="true"
        data-testid="open-wav"
        onChange={(e) => {
          props.onOpenWav(e.target.files?.[0] ?? null);
          e.target.value = '';
        }}
      />
    </>
  );
}

/**
 * The meter cell of one step: parsed by the one field rule (decimal point or comma); an invalid entry is
 * shown as invalid and not used; a reading far from the set voltage is questioned and used only once
 * confirmed. Until then the step uses its set voltage, and the cell says so.
 */
export function MeterCell(props: {
  stepIndex: number;
  setVolts: number;
  value: number | null;
  onSet(v: number | null): void;
}) {
  const [text, setText] = useState(props.value === null ? '' : String(props.value));
  const [question, setQuestion] = useState<{ value: number; text: string } | null>(null);
  const parsed = parseNumberField(text, { min: -20, max: 20, unit: 'V' });
  const commit = () => {
    if (parsed.kind === 'invalid') {
      setQuestion(null);
      if (props.value !== null) props.onSet(null);
      return;
    }
    if (parsed.kind === 'empty') {
      setQuestion(null);
      if (props.value !== null) props.onSet(null);
      return;
    }
    if (parsed.value === props.value) return;
    const q = meterQuestion(parsed.value, props.setVolts);
    if (q) {
      setQuestion({ value: parsed.value, text: q });
      if (props.value !== null) props.onSet(null);
      return;
    }
    setQuestion(null);
    props.onSet(parsed.value);
  };
  const invalid = parsed.kind === 'invalid';
  const label = `Meter reading for step ${props.stepIndex + 1} (set ${formatVolts(props.setVolts)}), volts, ${DECIMAL_HINT}`;
  return (
    <div className={`meter-cell ${invalid ? 'invalid' : ''} ${question ? 'questioned' : ''}`}>
      <input
        className="meter-input"
        inputMode="decimal"
        placeholder="meter V"
        aria-label={label}
        aria-invalid={invalid || question !== null}
        data-testid={`meter-${props.stepIndex}`}
        data-state={invalid ? 'invalid' : question ? 'questioned' : props.value !== null ? 'used' : 'empty'}
        value={text}
        onChange={(e) => setText(e.target.value)}
        onBlur={commit}
        onKeyDown={(e) => {
          if (e.key === 'Enter') commit();
        }}
      />
      {invalid && (
        <span className="field-error" role="alert">
          {parsed.reason}; using the set {formatVolts(props.setVolts)}
        </span>
      )}
      {question && (
        <span className="meter-question" role="alert" data-testid={`meter-question-${props.stepIndex}`}>
          {question.text}{' '}
          <button
            className="small"
            data-testid={`meter-confirm-${props.stepIndex}`}
            onClick={() => {
              props.onSet(question.value);
              setQuestion(null);
            }}
          >
            Use {question.value} V
          </button>{' '}
          <span className="dim">Until then the set {formatVolts(props.setVolts)} is used.</span>
        </span>
      )}
    </div>
  );
}

/** Steps in voltage order (ties in order of play): the table's order. */
function byVoltage(steps: readonly RunStep[]): RunStep[] {
  return [...steps].sort((a, b) => a.nominalVolts - b.nominalVolts || a.index - b.index);
}

export function RunPanel(p: RunPanelProps) {
  const parsed = parsePlan(p.planText);
  const preview = planPreview(p.planText);
  const s = p.run?.state ?? null;
  const active = isRunActive(s);
  const presetMatch = PLAN_PRESETS.find(
    (pr) => parsed.kind === 'ok' && formatPlan(pr.volts) === formatPlan(parsed.volts),
  );
  const rows = p.analysis?.table?.rows ?? [];
  const hzDecimals = hzColumnDecimals(rows.map((r) => r.hz));
  const rowByStep = new Map<number, (typeof rows)[number]>();
  rows.forEach((r) => {
    const pt = p.analysis?.points[r.index];
    if (pt) rowByStep.set(pt.stepIndex, r);
  });
  const result = p.analysis ? resultFromAnalysis(p.analysis) : null;
  const prompt = s
    ? promptFor(s, p.simulated, {
        pausedReason: p.run?.pausedReason ?? null,
        waitingForInput: p.run?.waitingForInput ?? false,
        firstStepHeld: p.firstStepHeld ?? false,
      })
    : null;
  const redo = s ? redoTarget(s) : 0;
  return (
    <div className="run-panel">
      {p.resumeOffer && (
        <div className="banner" data-testid="resume-offer" role="status">
          <span>{p.resumeOffer.text}</span>
          <button onClick={p.resumeOffer.onResume} data-testid="resume-run">
            Resume
          </button>
          <button onClick={p.resumeOffer.onDiscard}>Discard</button>
        </div>
      )}
      <div className="row plan-row">
        <div className="field">
          <label htmlFor="plan-preset">Plan</label>
          <select
            id="plan-preset"
            value={presetMatch?.id ?? 'custom'}
            onChange={(e) => {
              const pr = PLAN_PRESETS.find((x) => x.id === e.target.value);
              if (pr) p.onPlanText(formatPlan(pr.volts));
            }}
            disabled={active}
          >
            {PLAN_PRESETS.map((pr) => (
              <option key={pr.id} value={pr.id}>
                {pr.label}
              </option>
            ))}
            <option value="custom">Custom (type below)</option>
          </select>
        </div>
        <div className={`field grow ${preview.ok ? '' : 'invalid'}`}>
          <label htmlFor="plan-text">Voltages, V</label>
          <input
            id="plan-text"
            value={p.planText}
            onChange={(e) => p.onPlanText(e.target.value)}
            disabled={active}
            data-testid="plan-text"
            aria-invalid={!preview.ok}
            aria-describedby="plan-preview"
          />
        </div>
        <button
          className="primary"
          onClick={p.onStart}
          disabled={!preview.ok || parsed.kind === 'error'}
          data-testid="start-run"
        >
          {active ? 'Restart run' : 'Start run'}
        </button>
        <OpenWavControl onOpenWav={p.onOpenWav} />
      </div>
      <p className="plan-hints">
        <span
          id="plan-preview"
          className={preview.ok ? 'plan-preview' : 'field-error'}
          data-testid="plan-preview"
          data-ok={String(preview.ok)}
        >
          {preview.text}
        </span>{' '}
        <span className="field-hint">
          · commas between values, ranges like 0-7, stepped ranges like 0:0.5:5; decimal point only
        </span>{' '}
        <span className="field-hint" data-testid="plan-sub-audio">
          · {subAudioPlanHint()}
        </span>
      </p>
      {p.setup}
      {p.wavStatus && (
        <p
          className={`message ${p.wavStatus.kind}`}
          role={p.wavStatus.kind === 'error' ? 'alert' : 'status'}
          data-testid="wav-message"
          data-kind={p.wavStatus.kind}
        >
          {p.wavStatus.text}
        </p>
      )}
      {s && prompt && (
        <div className={`prompt phase-${s.phase}`} data-testid="run-prompt" data-phase={s.phase}>
          <div className="prompt-main">
            <div className="prompt-title" role="status">
              {prompt.title}
            </div>
            <div className="prompt-detail">{prompt.detail}</div>
            <div
              className="progress"
              role="progressbar"
              aria-label="Progress of this step"
              aria-valuemin={0}
              aria-valuemax={100}
              aria-valuenow={Math.round((s.phase === 'captured' ? 1 : s.progress) * 100)}
            >
              <div
                className={`progress-fill ${s.phase === 'capturing' || s.phase === 'measuring' ? 'capturing' : ''}`}
                style={{ width: `${Math.round((s.phase === 'captured' ? 1 : s.progress) * 100)}%` }}
              />
            </div>
            <div className="step-count">
              Step {Math.min(s.current + 1, s.steps.length)} of {s.steps.length} ·{' '}
              {s.steps.filter((x) => x.status === 'captured').length} captured
            </div>
          </div>
          <div className="controls">
            <button onClick={() => p.onEvent({ type: 'capture-now' })} disabled={!active}>
              Capture now <Kbd k={RUN_KEYS.captureNow} />
            </button>
            {!s.warning && (
              <button onClick={() => p.onEvent({ type: 'redo', stepIndex: redo })}>
                Redo step {redo + 1} <Kbd k={RUN_KEYS.redo} />
              </button>
            )}
            <button onClick={() => p.onEvent({ type: 'skip' })} disabled={!active}>
              Skip <Kbd k={RUN_KEYS.skip} />
            </button>
            <button onClick={() => p.onEvent({ type: 'back' })}>
              Back <Kbd k={RUN_KEYS.back} />
            </button>
            <button
              onClick={() => p.onEvent({ type: s.phase === 'paused' ? 'resume' : 'pause' })}
              disabled={!active}
              data-testid="pause"
            >
              {s.phase === 'paused' ? 'Resume' : 'Pause'} <Kbd k={RUN_KEYS.pause} />
            </button>
            {p.onBenchView && (
              <button onClick={p.onBenchView} data-testid="bench-view-open">
                Bench view
              </button>
            )}
            <button onClick={p.onClose} className="quiet" data-testid="close-run">
              Close run
            </button>
          </div>
        </div>
      )}
      {p.firstStep}
      {s?.warning && (
        <div className="warning" role="alert" data-testid="run-warning">
          <strong>
            {s.warning.likely === 'missed-step'
              ? 'This looks like the step after next: was a step missed?'
              : 'This is not the pitch expected: is the voltage right?'}
          </strong>
          <span>
            Heard {formatHz(s.warning.heardHz)} Hz, expected {formatHz(s.warning.expectedHz)} Hz (
            {formatCents(s.warning.offCents, 1)} ¢).
          </span>
          <button onClick={() => p.onEvent({ type: 'accept-pitch' })}>
            Accept this pitch <Kbd k={RUN_KEYS.accept} />
          </button>
          <button onClick={() => p.onEvent({ type: 'redo', stepIndex: s.current })}>
            Redo step {s.current + 1} <Kbd k={RUN_KEYS.redo} />
          </button>
        </div>
      )}
      {s && (
        <div className="run-grid">
          <div className="table-wrap">
            <table className="error-table" data-testid="error-table">
              <caption className="sr-only">Error table, rows in order of voltage</caption>
              <ErrorTableHead last={null} lastLabel="Redo" />
              <tbody>
                {byVoltage(s.steps).map((st) => {
                  const row = rowByStep.get(st.index);
                  const cur = st.index === s.current && active;
                  const meterCell = (
                    <MeterCell
                      key={`m${st.index}-${st.measuredVolts}`}
                      stepIndex={st.index}
                      setVolts={st.nominalVolts}
                      value={st.measuredVolts}
                      onSet={(v) => p.onEvent({ type: 'set-measured-volts', stepIndex: st.index, volts: v })}
                    />
                  );
                  if (!st.capture || !row) {
                    return (
                      <tr key={st.index} className={`pending ${cur ? 'current' : ''} ${st.status}`}>
                        <td>{st.index + 1}</td>
                        <td>{formatVolts(st.nominalVolts, false)}</td>
                        <td>{meterCell}</td>
                        <td colSpan={5} className="status-cell">
                          {pendingText(st, s)}
                        </td>
                        <td />
                      </tr>
                    );
                  }
                  return (
                    <tr
                      key={st.index}
                      data-testid="step-row"
                      data-step={st.index}
                      data-volts={String(st.nominalVolts)}
                      data-applied-volts={st.appliedVolts == null ? '' : String(st.appliedVolts)}
                      data-hz={String(row.hz)}
                      data-uncertainty-cents={String(st.capture.uncertaintyCents)}
                      data-interval-error-cents={
                        row.intervalErrorCents === null ? '' : String(row.intervalErrorCents)
                      }
                      data-source={st.capture.source}
                      data-flags={st.capture.flags.join(' ')}
                      data-captured-at={String(p.run?.capturedAt[st.index] ?? '')}
                      data-step-started-at={String(p.run?.stepStartedAt[st.index] ?? '')}
                      className={cur ? 'current' : ''}
                    >
                      <td>
                        {st.index + 1}
                        <StepFlags flags={st.capture.flags} />
                      </td>
                      <td>{formatVolts(st.nominalVolts, false)}</td>
                      <td>{meterCell}</td>
                      <td className="num mono">{formatHz(row.hz, hzDecimals)}</td>
                      <td>
                        {row.noteName} <span className="dim">{formatCents(row.noteCents, 1)}</span>
                      </td>
                      <td className="num mono">{formatCents(row.centsFromIdeal)}</td>
                      <td className="num mono">{formatCents(row.intervalErrorCents)}</td>
                      <td className="num mono dim">{formatUncertainty(row.uncertaintyCents)}</td>
                      <td>
                        <button
                          className="small"
                          aria-label={`Redo step ${st.index + 1}`}
                          onClick={() => p.onEvent({ type: 'redo', stepIndex: st.index })}
                        >
                          Redo
                        </button>
                      </td>
                    </tr>
                  );
                })}
              </tbody>
            </table>
          </div>
        </div>
      )}
      {s && (
        <div className="chart-fit">
          <div className="chart-wrap">
            <StepChart planVolts={s.steps.map((x) => x.measuredVolts ?? x.nominalVolts)} steps={rows} />
          </div>
          {result && <FitSummary result={result} />}
        </div>
      )}
      {s && result && <AdviceList result={result} onCheck={p.onCheckAdvice} />}
      {!s && (
        <div className="empty-state">
          <p>
            Pick a plan and press <strong>Start run</strong>. Spanmeter asks for each voltage in turn, waits
            for the pitch to settle, captures it and moves on by itself.
          </p>
          <p className="dim">
            Keys during a run: Space capture now · R redo · S skip · B back · P pause · Enter accept.
          </p>
        </div>
      )}
    </div>
  );
}
