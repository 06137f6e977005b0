/**
 * A step's flags (dsp/calibration/result.ts `STEP_FLAGS`) in words, beside its step number in every error
 * table: the live run, an opened recording, a saved run and the printed report.
 */
import type { StepFlag } from '../../../../dsp/calibration/index.ts';

/** What each flag says on screen, and its longer explanation (tooltip and screen readers). */
export const STEP_FLAG_TEXT: Readonly<Record<StepFlag, { label: string; help: string }>> = {
  'spans-break': {
    label: 'gap',
    help: 'The audio had a break inside this step’s window: it was measured around the break, and its uncertainty includes it.',
  },
  'still-settling': {
    label: 'still settling',
    help: 'The pitch was still creeping when this step was captured: the creep left is counted in its uncertainty. Hold each voltage longer to do better.',
  },
  'suspect-voltage': {
    label: 'check voltage',
    help: 'The pitch fits another voltage of the plan better: check the voltage at the oscillator’s input jack.',
  },
  'outside-tolerance-unknown': {
    label: 'can’t tell',
    help: 'Too uncertain to say whether this step is within the tolerance.',
  },
};

export function StepFlags(props: { flags: readonly StepFlag[] }) {
  if (props.flags.length === 0) return null;
  return (
    <>
      {props.flags.map((f) => (
        <span key={f} className="step-flag" title={STEP_FLAG_TEXT[f].help} data-flag={f}>
          {STEP_FLAG_TEXT[f].label}
        </span>
      ))}
    </>
  );
}
