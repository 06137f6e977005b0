/** The error table of a result (saved run, printed report): rows in voltage order, read only. */
import {
  formatCents,
  formatHz,
  formatUncertainty,
  formatVolts,
  hzColumnDecimals,
} from '../../../../dsp/format/index.ts';
import { ErrorTableHead } from './ErrorTableHead.tsx';
import { StepFlags } from './StepFlags.tsx';
import type { ResultModel } from './model.ts';

export function ResultTable(props: { result: ResultModel; testId?: string; caption?: string }) {
  const hzDecimals = hzColumnDecimals(props.result.rows.map((r) => r.hz));
  return (
    <div className="table-wrap">
      <table className="error-table" data-testid={props.testId ?? 'result-table'}>
        {props.caption && <caption className="sr-only">{props.caption}</caption>}
        <ErrorTableHead last="" />
        <tbody>
          {props.result.rows.map((r) => (
            <tr
              key={r.step}
              data-testid="result-row"
              data-volts={String(r.nominalVolts)}
              data-hz={String(r.hz)}
              data-interval-error-cents={r.intervalErrorCents === null ? '' : String(r.intervalErrorCents)}
            >
              <td>
                {r.step}
                <StepFlags flags={r.flags} />
              </td>
              <td>{formatVolts(r.nominalVolts, false)}</td>
              <td>{r.measuredVolts === null ? '' : formatVolts(r.measuredVolts, false)}</td>
              <td className="num mono">{formatHz(r.hz, hzDecimals)}</td>
              <td>
                {r.noteName} <span className="dim">{formatCents(r.noteCents, 1)}</span>
              </td>
              <td className="num mono">{formatCents(r.centsFromIdeal)}</td>
              <td className="num mono">{formatCents(r.intervalErrorCents)}</td>
              <td className="num mono dim">{formatUncertainty(r.uncertaintyCents)}</td>
              <td />
            </tr>
          ))}
        </tbody>
      </table>
    </div>
  );
}
