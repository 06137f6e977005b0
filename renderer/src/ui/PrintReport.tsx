/**
 * The printed report of one run: a document a customer could receive. Hidden on screen; the only thing
 * printed (see the print rules in styles.css). It shows the run it is given (a saved run with its own
 * date, label and unit details, or the live run) and nothing else.
 */
import { memo } from 'react';
import {
  formatCents,
  formatHz,
  formatNumber,
  formatUncertainty,
  formatVolts,
  hzColumnDecimals,
} from '../../../dsp/format/index.ts';
import { StepChart } from './charts.tsx';
import { BudgetTable } from './results/BudgetTable.tsx';
import { formatTakenAt, trackingBasis, verdictFor, VERDICT_LABELS, type RunReport } from './results/index.ts';

function Meta(props: { k: string; v: string | null | undefined }) {
  return (
    <>
      <th scope="row">{props.k}</th>
      <td>{props.v === null || props.v === undefined || props.v === '' ? '—' : props.v}</td>
    </>
  );
}

/** Re-rendered only when the report changes (not on every reading). */
export const PrintReport = memo(function PrintReport(props: { report: RunReport | null }) {
  const r = props.report;
  const hzDecimals = hzColumnDecimals(r?.result.rows.map((x) => x.hz) ?? []);
  if (!r) {
    return (
      <section className="print-report" aria-hidden="true">
        <p>Nothing to print: choose a run in the unit book first.</p>
      </section>
    );
  }
  const verdict = verdictFor(r.result, r.toleranceCents);
  const fit = r.result.fit;
  // The scale error's expanded uncertainty from its budget; an older record has only the fit's standard error.
  const sb = r.result.source?.fit?.scaleBudget ?? null;
  const scaleU = sb
    ? { value: sb.expandedCents, what: `U, k = ${sb.coverageFactor.toFixed(2)}` }
    : fit && fit.scaleErrorStdErrCents !== null
      ? { value: fit.scaleErrorStdErrCents, what: '1σ' }
      : null;
  const pb = r.result.source?.fit?.pitchAt0VBudget ?? null;
  return (
    <section className="print-report" aria-hidden="true" data-testid="print-report">
      <header className="print-head">
        <div>
          <div className="print-brand">Spanmeter</div>
          <h1>1 V/octave tracking report</h1>
        </div>
        <div className={`print-verdict ${verdict.kind}`}>
          {VERDICT_LABELS[verdict.kind].toUpperCase()}
          <span>±{r.toleranceCents} ¢</span>
        </div>
      </header>
      <table className="print-meta">
        <tbody>
          <tr>
            <Meta k="Unit" v={r.unitName} />
            <Meta k="Serial" v={r.serial} />
          </tr>
          <tr>
            <Meta k="Run" v={r.label} />
            <Meta k="Measured" v={formatTakenAt(r.takenAt)} />
          </tr>
          <tr>
            <Meta k="Room" v={r.roomTempC === null ? null : `${r.roomTempC} °C`} />
            <Meta k="Warm-up" v={r.warmUpMinutes === null ? null : `${r.warmUpMinutes} min`} />
          </tr>
          <tr>
            <Meta k="Meter" v={r.meterUsed} />
            <Meta k="Plan" v={`${r.planVolts.length} points, ${r.planVolts.join(', ')} V`} />
          </tr>
        </tbody>
      </table>
      <div className="print-summary">
        <div>
          <div className="print-label">Scale error</div>
          <div className="print-figure">
            {fit ? `${formatCents(fit.scaleErrorCentsPerOctave)} ¢/oct` : '—'}
            {fit && scaleU !== null && (
              <small>
                ± {formatUncertainty(scaleU.value)} ¢/oct ({scaleU.what})
              </small>
            )}
          </div>
        </div>
        <div>
          <div className="print-label">Worst step from ideal</div>
          <div className="print-figure">
            {verdict.worstCents === null
              ? '—'
              : `${formatNumber(verdict.worstCents, 2)} ± ${formatUncertainty(verdict.worstExpandedCents ?? 0)} ¢ (U)`}
          </div>
        </div>
        <div>
          <div className="print-label">Pitch at 0 V</div>
          <div className="print-figure">
            {fit ? `${formatHz(fit.hzAt0V)} Hz` : '—'}
            {fit && pb && (
              <small>
                ± {formatUncertainty(pb.expandedCents)} ¢ (U, k = {pb.coverageFactor.toFixed(2)})
              </small>
            )}
          </div>
        </div>
      </div>
      <p className="print-verdict-text">{verdict.text}.</p>
      <p className="print-verdict-basis">{trackingBasis(r.toleranceCents)}.</p>
      {r.notes && (
        <p className="print-notes">
          <strong>Notes:</strong> {r.notes}
        </p>
      )}
      {r.result.rows.length > 0 ? (
        <>
          <table className="print-table">
            <thead>
              <tr>
                <th>Step</th>
                <th>Set, V</th>
                <th>Meter, V</th>
                <th>Frequency, Hz</th>
                <th>Note</th>
                <th>From ideal, ¢</th>
                <th>Interval error, ¢</th>
                <th>u, ¢ (1σ)</th>
              </tr>
            </thead>
            <tbody>
              {r.result.rows.map((x) => (
                <tr key={x.step}>
                  <td>{x.step}</td>
                  <td>{formatVolts(x.nominalVolts, false)}</td>
                  <td>{x.measuredVolts === null ? '—' : formatVolts(x.measuredVolts, false)}</td>
                  <td>{formatHz(x.hz, hzDecimals)}</td>
                  <td>
                    {x.noteName} {formatCents(x.noteCents, 1)}
                  </td>
                  <td>{formatCents(x.centsFromIdeal)}</td>
                  <td>{formatCents(x.intervalErrorCents)}</td>
                  <td>{formatUncertainty(x.uncertaintyCents)}</td>
                </tr>
              ))}
            </tbody>
          </table>
          <div className="print-chart">
            <StepChart
              planVolts={r.planVolts}
              steps={r.result.rows.map((x) => ({
                volts: x.volts,
                centsFromIdeal: x.centsFromIdeal,
                intervalErrorCents: x.intervalErrorCents,
                uncertaintyCents: x.uncertaintyCents,
              }))}
            />
          </div>
          <div className="print-budget" data-testid="print-budget">
            <h2>Uncertainty budget</h2>
            <p className="print-budget-note">
              Standard uncertainty of each contribution and combined (u<sub>c</sub>), in cents (cents per
              octave for the scale error); U = k·u<sub>c</sub> with k for a coverage of about 95 %. A
              step&apos;s budget is that of its pitch at its voltage.
            </p>
            <BudgetTable result={r.result.source} className="print-budget-table" />
          </div>
          {r.result.advice.length > 0 && (
            <div className="print-advice">
              <h2>Trim advice</h2>
              <ol>
                {r.result.advice.map((a, i) => (
                  <li key={i}>{a.text}</li>
                ))}
              </ol>
            </div>
          )}
        </>
      ) : (
        <p>No captured steps.</p>
      )}
      <footer className="print-foot">
        <p>
          Frequencies measured by Spanmeter {r.softwareVersion}. Notes use A4 = 440 Hz (ISO 16) and middle C =
          C4. Cents are 1200·log2 of a frequency ratio. “From ideal” is the error against an exact 1 V/octave
          line through the lowest step; “interval error” is the error of each interval from the next lower
          voltage (positive: the interval is wide). In the step table, u is one standard uncertainty; U in the
          budget is the expanded uncertainty (GUM, JCGM 100:2008). Uncertainties are given to two significant
          digits.
        </p>
        <p className="print-sign">Checked by: ______________________ Date: ____________</p>
      </footer>
    </section>
  );
});
