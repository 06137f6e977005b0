/** The question about the first step of a run (hooks/useFirstStep.ts), or the note that it is known. */
import type { FirstStep } from '../hooks/useFirstStep.ts';
import { formatCents, formatHz, formatVolts } from '../../../dsp/format/index.ts';

export function FirstStepQuestion(props: { first: FirstStep }) {
  const { first } = props;
  if (!first.step) return null;
  if (first.needsAnswer) {
    const v = formatVolts(first.step.volts);
    return (
      <div className="warning first-step" role="alert" data-testid="first-step-question">
        <strong>
          Is this {v}? Step 1 read {formatHz(first.step.hz)} Hz.
        </strong>
        <span>
          If the voltage was not {v}, every step would be labelled wrong: the run waits for your answer.
          Confirm, or set {v} and measure step 1 again.
        </span>
        <button onClick={first.confirm} data-testid="first-step-yes">
          Yes, it is <kbd>Y</kbd>
        </button>
        <button onClick={first.redo} data-testid="first-step-redo">
          No: measure step 1 again
        </button>
      </div>
    );
  }
  if (first.known) {
    const c = first.known.cents;
    return (
      <p className="message info small" data-testid="first-step-known">
        Step 1 is {formatCents(c, 1)} ¢ from the same voltage in “{first.known.label}” of{' '}
        {first.known.unitName}: the voltage looks right.
      </p>
    );
  }
  return null;
}
