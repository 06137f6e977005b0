/**
 * What to trim: the advice of a result, in working order, with the next measurement. Where an item can be
 * checked on the scale pair, one click opens it with the voltages filled in.
 */
import type { ResultModel } from './model.ts';

const TRIMMER_NAMES: Record<string, string> = { scale: 'scale', offset: 'offset', hf: 'HF', none: 'note' };

export function AdviceList(props: {
  result: ResultModel;
  /** Opens the scale pair for a trimmer's advice (scale or HF); absent on paper. */
  onCheck?: (trimmer: 'scale' | 'hf') => void;
}) {
  const { advice, next, caution } = props.result;
  return (
    <div className="advice" data-testid="advice">
      <h3>What to trim</h3>
      {advice.length === 0 ? (
        <p className="dim">No advice yet.</p>
      ) : (
        <ol>
          {advice.map((it, i) => (
            <li key={i} className={`advice-${it.status}`}>
              <span className="chip">{TRIMMER_NAMES[it.trimmer] ?? it.trimmer}</span> {it.text}
              {it.resistorLines.length > 0 && (
                <ul className="resistors" data-testid="advice-resistors">
                  {it.resistorLines.map((l) => (
                    <li key={l}>{l}</li>
                  ))}
                </ul>
              )}
              {props.onCheck &&
                (it.trimmer === 'scale' || it.trimmer === 'hf') &&
                props.result.pairs[it.trimmer] !== null && (
                  <button
                    className="small check-button"
                    data-testid={`check-${it.trimmer}`}
                    onClick={() => props.onCheck?.(it.trimmer as 'scale' | 'hf')}
                  >
                    Open the scale pair at {props.result.pairs[it.trimmer]?.low} and{' '}
                    {props.result.pairs[it.trimmer]?.high} V →
                  </button>
                )}
            </li>
          ))}
        </ol>
      )}
      {next && (
        <p className="next">
          <strong>Next:</strong> {next}
        </p>
      )}
      {caution && <p className="caution">{caution}</p>}
    </div>
  );
}
