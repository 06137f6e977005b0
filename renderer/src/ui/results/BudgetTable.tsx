/**
 * The uncertainty budget of a result as one table (results/budget.ts): a row per quantity (scale error,
 * pitch at 0 V, each step), the combined standard uncertainty u_c, the coverage factor k, the expanded
 * uncertainty U and a column per named contribution, all to two significant digits (JCGM 100:2008 §7.2.6).
 */
import type { CalibrationResult } from '../../../../dsp/calibration/index.ts';
import { formatUncertainty } from '../../../../dsp/format/index.ts';
import { budgetColumns, budgetsOf, budgetSourceLabel, formatK, termOf } from './budget.ts';

export function BudgetTable(props: { result: CalibrationResult | null; className?: string }) {
  const budgets = budgetsOf(props.result);
  if (budgets.length === 0) {
    return (
      <p className="dim small" data-testid="budget-none">
        No uncertainty budget was kept with this run.
      </p>
    );
  }
  const cols = budgetColumns(budgets);
  return (
    <table className={`budget-table ${props.className ?? ''}`} data-testid="budget-table">
      <thead>
        <tr>
          <th scope="col">Quantity</th>
          <th scope="col">
            u<sub>c</sub>
          </th>
          <th scope="col">k</th>
          <th scope="col">
            U = k·u<sub>c</sub>
          </th>
          {cols.map((c) => (
            <th scope="col" key={c} className="budget-term">
              {budgetSourceLabel(c)}
            </th>
          ))}
        </tr>
      </thead>
      <tbody>
        {budgets.map((b) => (
          <tr key={b.key} data-testid="budget-row" data-key={b.key}>
            <th scope="row">
              {b.quantity}, {b.unit}
            </th>
            <td className="num" data-testid="budget-combined">
              {formatUncertainty(b.combined)}
            </td>
            <td className="num">{formatK(b.coverageFactor)}</td>
            <td className="num" data-testid="budget-expanded">
              {formatUncertainty(b.expanded)}
            </td>
            {cols.map((c) => {
              const u = termOf(b, c);
              return (
                <td className="num dim" key={c}>
                  {u === null ? '—' : formatUncertainty(u)}
                </td>
              );
            })}
          </tr>
        ))}
      </tbody>
    </table>
  );
}
