/**
 * The first step of a run on a real input is confirmed against what is known: when the unit's record has
 * a run with the same voltage, a pitch within 150 cents of it counts as confirmed; otherwise the user
 * answers one question with one key ("Is this 0.000 V? Step 1 read 32.66 Hz."). A wrong first voltage
 * would label every later step wrong. The simulator is driven by the app, so its voltages are known.
 */
import { useCallback, useMemo, useState } from 'react';
import type { RunState } from '../../../dsp/calibration/index.ts';
import type { UnitRecord } from '../../../main/api-types.ts';

/** How far the first step may be from the same voltage in the unit's last run and count as known, cents. */
export const FIRST_STEP_MATCH_CENTS = 150;

export interface FirstStep {
  /** The first step's voltage and pitch, once captured. */
  readonly step: { volts: number; hz: number } | null;
  /** True while the question is open. */
  readonly needsAnswer: boolean;
  /** Set when the unit's record confirmed it: cents from the same voltage in that run, and its label. */
  readonly known: { cents: number; label: string; unitName: string } | null;
  confirm(): void;
}

export function useFirstStep(
  run: RunState | null,
  onRealInput: boolean,
  record: UnitRecord | null,
): FirstStep {
  const [confirmed, setConfirmed] = useState<string | null>(null);
  const first = run?.steps[0] ?? null;
  const key = run && first?.capture ? `${run.plan.volts.join(',')}@${first.capture.hz}` : null;
  const known = useMemo(() => {
    if (!first?.capture || !record) return null;
    const last = record.runs.at(-1);
    const same = last?.result.steps.find(
      (s) => s.volts !== null && Math.abs(s.volts - first.nominalVolts) < 1e-6,
    );
    if (!last || !same) return null;
    const cents = 1200 * Math.log2(first.capture.hz / same.hz);
    return Math.abs(cents) <= FIRST_STEP_MATCH_CENTS
      ? { cents, label: last.label, unitName: record.unitName }
      : null;
  }, [first, record]);
  const confirm = useCallback(() => setConfirmed(key), [key]);
  return {
    step: first?.capture ? { volts: first.nominalVolts, hz: first.capture.hz } : null,
    needsAnswer: onRealInput && key !== null && confirmed !== key && known === null,
    known: onRealInput ? known : null,
    confirm,
  };
}
