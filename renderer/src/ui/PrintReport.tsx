/**
 * The printable report: hidden on screen, the only thing printed (see the print rules in styles.css).
 */
import type { RunAnalysis } from '../lib/analysis.ts';
import { formatCents, formatHz, formatUncertainty, formatVolts } from '../lib/format.ts';
import { StepChart } from './charts.tsx';
import type { UnitInfo } from './RecordsPanel.tsx';
import { FitAndAdvice } from './RunPanel.tsx';

export function PrintReport(props: {
  analysis: RunAnalysis | null;
  info: UnitInfo;
  planVolts: readonly number[];
}) {
  const a = props.analysis;
  const i = props.info;
  return (
    <section className="print-report" aria-hidden="true">
      <h1>Spanmeter tracking report</h1>
      <table className="print-meta">
        <tbody>
          <tr>
            <th>Unit</th>
            <td>{i.unitName || '—'}</td>
            <th>Serial</th>
            <td>{i.serial || '—'}</td>
          </tr>
          <tr>
            <th>Date</th>
            <td>{new Date().toLocaleString()}</td>
            <th>Room</th>
            <td>{i.roomTempC ? `${i.roomTempC} °C` : '—'}</td>
          </tr>
          <tr>
            <th>Meter</th>
            <td>{i.meterUsed || '—'}</td>
            <th>Warm-up</th>
            <td>{i.warmUpMinutes ? `${i.warmUpMinutes} min` : '—'}</td>
          </tr>
        </tbody>
      </table>
      {i.notes && <p>{i.notes}</p>}
      {a?.table ? (
        <>
          <table className="print-table">
            <thead>
              <tr>
                <th>V set</th>
                <th>V meter</th>
                <th>Hz</th>
                <th>Note</th>
                <th>¢ from ideal</th>
                <th>¢ interval error</th>
                <th>± ¢</th>
              </tr>
            </thead>
            <tbody>
              {a.table.rows.map((r) => (
                <tr key={r.index}>
                  <td>{formatVolts(r.nominalVolts)}</td>
                  <td>{r.measuredVolts === null ? '—' : formatVolts(r.measuredVolts)}</td>
                  <td>{formatHz(r.hz)}</td>
                  <td>
                    {r.noteName} {formatCents(r.noteCents, 1)}
                  </td>
                  <td>{formatCents(r.centsFromIdeal)}</td>
                  <td>{formatCents(r.intervalErrorCents)}</td>
                  <td>{formatUncertainty(r.uncertaintyCents)}</td>
                </tr>
              ))}
            </tbody>
          </table>
          <StepChart
            planVolts={props.planVolts}
            steps={a.table.rows.map((r) => ({
              volts: r.volts,
              centsFromIdeal: r.centsFromIdeal,
              intervalErrorCents: r.intervalErrorCents,
              uncertaintyCents: r.uncertaintyCents,
            }))}
          />
          <FitAndAdvice analysis={a} />
        </>
      ) : (
        <p>No captured steps.</p>
      )}
      <p className="small">
        Notes use A4 = 440 Hz and middle C = C4. Uncertainties are one standard uncertainty.
      </p>
    </section>
  );
}
