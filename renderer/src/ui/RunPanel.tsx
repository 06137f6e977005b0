/**
 * The guided run: plan, prompt with settling progress, controls on keys, the error table filling in,
 * the per-step chart, the fit summary and the trim advice.
 */
import { useState, type ReactNode } from 'react';
import type { ResistorChange } from '../../../dsp/advice.ts';
import { formatOhms } from '../../../dsp/eseries.ts';
import { PLAN_PRESETS, formatPlan, parsePlan } from '../../../dsp/plan.ts';
import { isRunActive, type RunState } from '../../../dsp/run.ts';
import type { RunSnapshot, UserRunEvent } from '../engine/protocol.ts';
import type { RunAnalysis } from '../lib/analysis.ts';
import { formatCents, formatHz, formatUncertainty, formatVolts } from '../lib/format.ts';
import { StepChart } from './charts.tsx';

/** The keys of the run's commands (shown on the buttons). */
export const RUN_KEYS = {
  captureNow: ' ',
  redo: 'r',
  skip: 's',
  back: 'b',
  pause: 'p',
  accept: 'Enter',
} as const;

function Kbd(props: { k: string }) {
  return <kbd>{props.k === ' ' ? 'Space' : props.k.length === 1 ? props.k.toUpperCase() : props.k}</kbd>;
}

/** The prompt line for the run's phase. */
function formatCreep(centsPerSecond: number | null): string {
  if (centsPerSecond === null) return 'measuring its slope';
  return `${Math.abs(centsPerSecond) < 0.001 ? '< 0.001' : Math.abs(centsPerSecond).toFixed(3)} cent/s`;
}

export function promptFor(
  s: RunState,
  simulated: boolean,
  why: { pausedReason?: string | null; waitingForInput?: boolean } = {},
): { title: string; detail: string } {
  const st = s.steps[s.current];
  const v = formatVolts(st?.nominalVolts ?? 0);
  const apply = simulated
    ? `The simulator moves to ${v} by itself.`
    : `Set ${v} at the oscillator’s 1 V/oct input and check it with the meter.`;
  switch (s.phase) {
    case 'apply-voltage':
      return {
        title: `Apply ${v}`,
        detail: why.waitingForInput ? `Waiting for the input to open. ${apply}` : apply,
      };
    case 'settling':
      return { title: `Settling at ${v}`, detail: 'Hold still: waiting for the pitch to settle.' };
    case 'capturing':
      return {
        title: `Capturing ${v}`,
        detail:
          s.capture?.firstCloseSeconds != null && s.capture.closedAtSeconds === null
            ? `Waiting for the pitch to stop creeping (${formatCreep(s.capture.creepCentsPerSecond)}).`
            : 'Measuring the settled pitch.',
      };
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
      return { title: `Unexpected pitch at ${v}`, detail: 'See the warning below.' };
    case 'paused':
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

export interface RunPanelProps {
  run: RunSnapshot | null;
  analysis: RunAnalysis | null;
  planText: string;
  onPlanText(t: string): void;
  onStart(): void;
  onEvent(e: UserRunEvent): void;
  onClose(): void;
  simulated: boolean;
  resumeOffer: { text: string; onResume(): void; onDiscard(): void } | null;
  onOpenWav(file: File | null): void;
  /** The last "Open WAV…" status: analysing, done, or why the file gave no analysis. */
  wavStatus: { kind: 'info' | 'error'; text: string } | null;
  /** The Setup disclosure, shown under the plan. */
  setup?: ReactNode;
}

/**
 * "Open WAV…": a file input inside a label styled as a button (in the browser build and in the
 * desktop app alike; tests set its file with playwright's setInputFiles).
 */
export function OpenWavControl(props: { onOpenWav(file: File | null): void }) {
  return (
    <label className="button-like">
      Open WAV…
      <input
        type="file"
        accept=".wav,audio/wav,audio/x-wav"
        className="hidden-file"
        data-testid="open-wav"
        onChange={(e) => {
          props.onOpenWav(e.target.files?.[0] ?? null);
          e.target.value = '';
        }}
      />
    </label>
  );
}

function MeterCell(props: { stepIndex: number; value: number | null; onSet(v: number | null): void }) {
  const [text, setText] = useState(props.value === null ? '' : String(props.value));
  const commit = () => {
    const t = text.trim().replace(',', '.');
    if (t === '') props.onSet(null);
    else if (Number.isFinite(Number(t))) props.onSet(Number(t));
  };
  return (
    <input
      className="meter-input"
      inputMode="decimal"
      placeholder="meter V"
      aria-label={`Meter reading for step ${props.stepIndex + 1}, volts`}
      value={text}
      onChange={(e) => setText(e.target.value)}
      onBlur={commit}
      onKeyDown={(e) => {
        if (e.key === 'Enter') commit();
      }}
    />
  );
}

export function RunPanel(p: RunPanelProps) {
  const parsed = parsePlan(p.planText);
  const s = p.run?.state ?? null;
  const active = isRunActive(s);
  const presetMatch = PLAN_PRESETS.find(
    (pr) => parsed.kind === 'ok' && formatPlan(pr.volts) === formatPlan(parsed.volts),
  );
  const rows = p.analysis?.table?.rows ?? [];
  const rowByStep = new Map<number, (typeof rows)[number]>();
  p.analysis?.points.forEach((pt, i) => rows[i] && rowByStep.set(pt.stepIndex, rows[i]));
  const prompt = s ? promptFor(s, p.simulated, p.run ?? {}) : null;
  const redoTarget = s ? (s.lastCapturedStep ?? s.current) : 0;
  return (
    <div className="run-panel">
      {p.resumeOffer && (
        <div className="banner" data-testid="resume-offer">
          <span>{p.resumeOffer.text}</span>
          <button onClick={p.resumeOffer.onResume}>Resume</button>
          <button onClick={p.resumeOffer.onDiscard}>Discard</button>
        </div>
      )}
      <div className="row plan-row">
        <label className="field">
          <span>Plan</span>
          <select
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
        </label>
        <label className="field grow">
          <span>Voltages</span>
          <input
            value={p.planText}
            onChange={(e) => p.onPlanText(e.target.value)}
            disabled={active}
            data-testid="plan-text"
            aria-invalid={parsed.kind === 'error'}
          />
        </label>
        <button
          className="primary"
          onClick={p.onStart}
          disabled={parsed.kind === 'error'}
          data-testid="start-run"
        >
          {active ? 'Restart run' : 'Start run'}
        </button>
        <OpenWavControl onOpenWav={p.onOpenWav} />
      </div>
      {parsed.kind === 'error' && <p className="message warn">{parsed.message}</p>}
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
            <div className="prompt-title">{prompt.title}</div>
            <div className="prompt-detail">{prompt.detail}</div>
            <div className="progress" aria-label="Progress">
              <div
                className={`progress-fill ${s.phase === 'capturing' || s.phase === 'measuring' ? 'capturing' : ''}`}
                style={{ width: `${Math.round((s.phase === 'captured' ? 1 : s.progress) * 100)}%` }}
              />
            </div>
            <div className="step-count">
              Step {Math.min(s.current + 1, s.steps.length)} of {s.steps.length} ·{' '}
              {s.steps.filter((x) => x.status === 'captured').length} captured
              {s.heardHz !== null ? ` · hearing ${formatHz(s.heardHz)} Hz` : ''}
            </div>
          </div>
          <div className="controls">
            <button onClick={() => p.onEvent({ type: 'capture-now' })} disabled={!active}>
              Capture now <Kbd k={RUN_KEYS.captureNow} />
            </button>
            <button onClick={() => p.onEvent({ type: 'redo', stepIndex: redoTarget })}>
              Redo step {redoTarget + 1} <Kbd k={RUN_KEYS.redo} />
            </button>
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
            <button onClick={p.onClose} className="quiet">
              Close run
            </button>
          </div>
        </div>
      )}
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
            Redo the step <Kbd k={RUN_KEYS.redo} />
          </button>
        </div>
      )}
      {s && (
        <div className="run-grid">
          <div className="table-wrap">
            <table className="error-table" data-testid="error-table">
              <ErrorTableHead last={null} />
              <tbody>
                {s.steps.map((st) => {
                  const row = rowByStep.get(st.index);
                  const cur = st.index === s.current && active;
                  const meterCell = (
                    <MeterCell
                      key={`m${st.index}-${st.measuredVolts}`}
                      stepIndex={st.index}
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
                          {st.status === 'skipped' ? 'skipped' : cur ? 'measuring…' : 'waiting'}
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
                      data-source={st.capture.source}
                      data-captured-at={String(p.run?.capturedAt[st.index] ?? '')}
                      data-step-started-at={String(p.run?.stepStartedAt[st.index] ?? '')}
                      className={cur ? 'current' : ''}
                    >
                      <td>{st.index + 1}</td>
                      <td>{formatVolts(st.nominalVolts, false)}</td>
                      <td>{meterCell}</td>
                      <td className="num mono">{formatHz(row.hz)}</td>
                      <td>
                        {row.noteName} <span className="dim">{formatCents(row.noteCents, 1)}</span>
                      </td>
                      <td className="num mono">{formatCents(row.centsFromIdeal)}</td>
                      <td className="num mono">{formatCents(row.intervalErrorCents)}</td>
                      <td className="num mono dim">{formatUncertainty(row.uncertaintyCents)}</td>
                      <td>
                        <button
                          className="small"
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
            <StepChart
              planVolts={s.steps.map((x) => x.measuredVolts ?? x.nominalVolts)}
              steps={rows.map((r) => ({
                volts: r.volts,
                centsFromIdeal: r.centsFromIdeal,
                intervalErrorCents: r.intervalErrorCents,
                uncertaintyCents: r.uncertaintyCents,
              }))}
            />
          </div>
          {p.analysis && <FitSummary analysis={p.analysis} />}
        </div>
      )}
      {s && p.analysis && <AdviceList analysis={p.analysis} />}
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

export function FitAndAdvice(props: { analysis: RunAnalysis }) {
  return (
    <div className="fit-advice">
      <FitSummary analysis={props.analysis} />
      <AdviceList analysis={props.analysis} />
    </div>
  );
}

/**
 * The calibration model's extra figures (issue 9): expanded uncertainties of the scale and the 0 V pitch from
 * their GUM budgets, the model's terms, the labelled straight line, suspect steps and the tolerance verdict.
 */
function ModelBudgetRows(props: { analysis: RunAnalysis }) {
  const rf = props.analysis.result.fit;
  if (!rf?.model) return null;
  const m = rf.model;
  const top = (b: NonNullable<typeof rf.scaleBudget>) =>
    [...b.terms].sort((a, c) => c.standardCents - a.standardCents)[0]?.source ?? '—';
  const suspects = props.analysis.result.steps.filter((s) => s.flags.includes('suspect-voltage'));
  return (
    <>
      {rf.scaleBudget && (
        <>
          <dt>Scale U (k = {rf.scaleBudget.coverageFactor.toFixed(2)})</dt>
          <dd className="mono" data-testid="scale-expanded">
            ±{formatUncertainty(rf.scaleBudget.expandedCents)} ¢/oct, mostly {top(rf.scaleBudget)}
          </dd>
        </>
      )}
      {rf.pitchAt0VBudget && (
        <>
          <dt>0 V pitch U</dt>
          <dd className="mono">
            ±{formatUncertainty(rf.pitchAt0VBudget.expandedCents)} ¢, mostly {top(rf.pitchAt0VBudget)}
          </dd>
        </>
      )}
      <dt>Model</dt>
      <dd>
        line
        {m.hfTerm !== 'none' &&
          ` + HF (equivalent reset time ${((m.equivalentResetSeconds ?? 0) * 1e6).toPrecision(2)} µs)`}
        {m.lowEndTerm && ' + low-end floor'}, by {m.criterion}
      </dd>
      {rf.straightLine && (
        <>
          <dt>Straight line, every step</dt>
          <dd className="mono">{formatCents(rf.straightLine.scaleErrorCentsPerOctave)} ¢/oct</dd>
        </>
      )}
      {suspects.length > 0 && (
        <>
          <dt>Suspect voltage</dt>
          <dd data-testid="suspect-steps">
            {suspects
              .map(
                (s) =>
                  `step ${s.index + 1}: plays as ${(s.likelyVolts ?? 0).toFixed(3)} V, given ${(s.volts ?? 0).toFixed(3)} V`,
              )
              .join('; ')}
          </dd>
        </>
      )}
      {rf.tolerance && (
        <>
          <dt>Tolerance ±{rf.tolerance.toleranceCents} ¢</dt>
          <dd data-testid="tolerance-verdict">{rf.tolerance.text}</dd>
        </>
      )}
    </>
  );
}

export function FitSummary(props: { analysis: RunAnalysis }) {
  const { fit, bends, table } = props.analysis;
  return (
    <div className="fit" data-testid="fit-summary">
      <h3>Fit</h3>
      {fit.kind === 'ok' ? (
        <dl>
          <dt>Scale</dt>
          <dd className="mono">
            {formatCents(fit.scaleErrorCentsPerOctave)} ± {formatUncertainty(fit.scaleErrorStdErrCents)} ¢/oct
          </dd>
          <dt>Octaves per volt</dt>
          <dd className="mono">{fit.octavesPerVolt.toFixed(6)}</dd>
          <dt>Pitch at 0 V</dt>
          <dd className="mono">{formatHz(fit.hzAt0V)} Hz</dd>
          <dt>Largest residual</dt>
          <dd className="mono">{fit.maxAbsResidualCents.toFixed(2)} ¢</dd>
          <ModelBudgetRows analysis={props.analysis} />
          {table && (
            <>
              <dt>Spread</dt>
              <dd className="mono">{table.spreadCents.toFixed(2)} ¢</dd>
            </>
          )}
          {bends.kind === 'ok' && !props.analysis.result.fit?.model && (
            <>
              <dt>Top end</dt>
              <dd>
                {bends.highEnd.kind === 'bent'
                  ? `bends ${bends.highEnd.direction} ${formatCents(bends.highEnd.centsAtEnd, 1)} ¢`
                  : 'straight'}
              </dd>
              <dt>Bottom end</dt>
              <dd>
                {bends.lowEnd.kind === 'bent'
                  ? `bends ${bends.lowEnd.direction} ${formatCents(bends.lowEnd.centsAtEnd, 1)} ¢`
                  : 'straight'}
              </dd>
            </>
          )}
        </dl>
      ) : (
        <p className="dim">Needs two captured steps.</p>
      )}
    </div>
  );
}

export function AdviceList(props: { analysis: RunAnalysis }) {
  const { advice } = props.analysis;
  return (
    <div className="advice" data-testid="advice">
      <h3>What to trim</h3>
      <ol>
        {advice.items.map((it, i) => (
          <li key={i} className={`advice-${it.status}`}>
            <span className="chip">{it.trimmer === 'none' ? 'note' : it.trimmer}</span> {it.text}
            {it.resistors && it.resistors.length > 0 && (
              <ul className="resistors" data-testid="advice-resistors">
                {it.resistors.map((r) => (
                  <li key={r.part}>{resistorLine(r)}</li>
                ))}
              </ul>
            )}
          </li>
        ))}
      </ol>
      <p className="next">
        <strong>Next:</strong> {advice.next}
      </p>
      <p className="caution">{advice.caution}</p>
    </div>
  );
}

const PART_NAMES: Record<ResistorChange['part'], string> = {
  series: 'Series Rs',
  shunt: 'Shunt Rsh',
  input: 'Input Rin',
  feedback: 'Feedback Rf',
};

/** One resistor change: exact value, then the nearest E24 and E96 values (IEC 60063) and what each leaves. */
function resistorLine(r: ResistorChange): string {
  const pick = (v: ResistorChange['e24']) =>
    `${v.series} ${formatOhms(v.ohms)} (leaves ${formatCents(v.resultingScaleErrorCentsPerOctave)} ¢/oct)`;
  return `${PART_NAMES[r.part]} ${formatOhms(r.fromOhms)} → ${formatOhms(r.toOhms)} · ${pick(r.e24)} · ${pick(r.e96)}`;
}

/** Column heads of the error table, shared by the live run and the recording view. */
export function ErrorTableHead(props: { last: string | null }) {
  return (
    <thead>
      <tr>
        <th>#</th>
        <th>Set</th>
        <th>Meter</th>
        <th className="num">Hz</th>
        <th>Note</th>
        <th className="num">¢ ideal</th>
        <th className="num">¢ interval</th>
        <th className="num">±¢</th>
        {props.last === null ? <th /> : <th className="num">{props.last}</th>}
      </tr>
    </thead>
  );
}
