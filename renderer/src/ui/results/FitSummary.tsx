/** The fit of a result: scale error with its uncertainty, octaves per volt, pitch at 0 V, residual, bends. */
import type { CalibrationResult } from '../../../../dsp/calibration/index.ts';
import { formatCents, formatHz, formatUncertainty, formatVolts } from '../../../../dsp/format/index.ts';
import { budgetSourceLabel } from './budget.ts';
import type { ResultModel } from './model.ts';

/**
 * The calibration model's extra figures (issue 9): expanded uncertainties of the scale and the 0 V pitch from
 * their GUM budgets, the model's terms, the labelled straight line, suspect steps and the tolerance verdict.
 */
function ModelBudgetRows(props: { result: CalibrationResult }) {
  const rf = props.result.fit;
  if (!rf?.model) return null;
  const m = rf.model;
  const top = (b: NonNullable<typeof rf.scaleBudget>) =>
    budgetSourceLabel([...b.terms].sort((a, c) => c.standardCents - a.standardCents)[0]?.source ?? '—');
  const suspects = props.result.steps.filter((s) => s.flags.includes('suspect-voltage'));
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
                  `step ${s.index + 1}: plays as ${formatVolts(s.likelyVolts)}, given ${formatVolts(s.volts)}`,
              )
              .join('; ')}
          </dd>
        </>
      )}
      {rf.tolerance && (
        <>
          <dt title="Each step's pitch against the 1 V/oct line through the target note at the reference voltage, so the offset counts too, judged with its expanded uncertainty. The unit book's verdict judges tracking alone, against the ideal line through the lowest step.">
            On the note line ±{rf.tolerance.toleranceCents} ¢
          </dt>
          <dd data-testid="tolerance-verdict">{rf.tolerance.text}</dd>
        </>
      )}
    </>
  );
}

export function FitSummary(props: { result: ResultModel }) {
  const { fit, spreadCents, source } = props.result;
  const modelled = Boolean(source?.fit?.model);
  // The ± beside the scale is its combined standard uncertainty from the GUM budget (reference voltage,
  // estimator, repeatability, …) where there is one; the fit's own standard error alone would claim far
  // more than the bench can give. Without a budget the fit's figure is shown and labelled as such.
  const scaleBudget = source?.fit?.scaleBudget ?? null;
  const scaleU = scaleBudget ? scaleBudget.combinedCents : (fit?.scaleErrorStdErrCents ?? null);
  return (
    <div className="fit" data-testid="fit-summary">
      <h3>Fit</h3>
      {fit ? (
        <dl>
          <dt>Scale error</dt>
          <dd className="mono" data-testid="fit-scale" data-cents={String(fit.scaleErrorCentsPerOctave)}>
            {formatCents(fit.scaleErrorCentsPerOctave)}
            {scaleU === null ? '' : ` ± ${formatUncertainty(scaleU)}`} ¢/oct
            {scaleU !== null && (
              <span className="dim">{scaleBudget ? ' (u, every source)' : ' (u, fit alone)'}</span>
            )}
          </dd>
          <dt>Octaves per volt</dt>
          <dd className="mono">{fit.octavesPerVolt.toFixed(6)}</dd>
          <dt>Pitch at 0 V</dt>
          <dd className="mono">{formatHz(fit.hzAt0V)} Hz</dd>
          <dt>Largest residual</dt>
          <dd className="mono">{fit.maxResidualCents.toFixed(2)} ¢</dd>
          {source && <ModelBudgetRows result={source} />}
          {spreadCents !== null && (
            <>
              <dt>Spread</dt>
              <dd className="mono">{spreadCents.toFixed(2)} ¢</dd>
            </>
          )}
          {fit.highEnd !== null && !modelled && (
            <>
              <dt>Top end</dt>
              <dd>{fit.highEnd}</dd>
            </>
          )}
          {fit.lowEnd !== null && !modelled && (
            <>
              <dt>Bottom end</dt>
              <dd>{fit.lowEnd}</dd>
            </>
          )}
        </dl>
      ) : (
        <p className="dim">Needs two captured steps.</p>
      )}
    </div>
  );
}
