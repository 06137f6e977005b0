/** The fit of a result: scale error with its uncertainty, octaves per volt, pitch at 0 V, residual, bends. */
import { formatCents, formatHz, formatUncertainty } from '../../lib/format.ts';
import type { ResultModel } from './model.ts';

export function FitSummary(props: { result: ResultModel }) {
  const { fit, spreadCents } = props.result;
  return (
    <div className="fit" data-testid="fit-summary">
      <h3>Fit</h3>
      {fit ? (
        <dl>
          <dt>Scale error</dt>
          <dd className="mono" data-testid="fit-scale" data-cents={String(fit.scaleErrorCentsPerOctave)}>
            {formatCents(fit.scaleErrorCentsPerOctave)}
            {fit.scaleErrorStdErrCents === null
              ? ''
              : ` ± ${formatUncertainty(fit.scaleErrorStdErrCents)}`}{' '}
            ¢/oct
          </dd>
          <dt>Octaves per volt</dt>
          <dd className="mono">{fit.octavesPerVolt.toFixed(6)}</dd>
          <dt>Pitch at 0 V</dt>
          <dd className="mono">{formatHz(fit.hzAt0V)} Hz</dd>
          <dt>Largest residual</dt>
          <dd className="mono">{fit.maxResidualCents.toFixed(2)} ¢</dd>
          {spreadCents !== null && (
            <>
              <dt>Spread</dt>
              <dd className="mono">{spreadCents.toFixed(2)} ¢</dd>
            </>
          )}
          {fit.highEnd !== null && (
            <>
              <dt>Top end</dt>
              <dd>{fit.highEnd}</dd>
            </>
          )}
          {fit.lowEnd !== null && (
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
