/**
 * The first step of a run on a real input is confirmed against what is known: when the unit's record has
 * a run with the same voltage, a pitch within 150 cents of it counts as confirmed; otherwise the user
 * answers one question with one key ("Is this 0.000 V? Step 1 read 32.66 Hz."). A wrong first voltage
 * would label every later step wrong, so while the question is open the run waits (paused): no later step
 * is taken until the answer. The simulator and a hands-off run set the voltages themselves, so theirs are
 * known.
 */
import { useCallback, useEffect, useMemo, useRef, useState } from 'react';
import type { RunState } from '../../../dsp/calibration/index.ts';
import type { UnitRecord } from '../../../main/api-types.ts';
import type { UserRunEvent } from '../engine/protocol.ts';

/** How far the first step may be from the same voltage in the unit's last run and count as known, cents. */
export const FIRST_STEP_MATCH_CENTS = 150;

export interface FirstStep {
  /** The first step's voltage and pitch, once captured. */
  readonly step: { volts: number; hz: number } | null;
  /** True while the question is open. */
  readonly needsAnswer: boolean;
  /** True while the run is paused for the question (it resumes on the answer). */
  readonly holding: boolean;
  /** Set when the unit's record confirmed it: cents from the same voltage in that run, and its label. */
  readonly known: { cents: number; label: string; unitName: string } | null;
  /** The voltage was right: the run goes on. */
  confirm(): void;
  /** The voltage was wrong: step 1 is measured again (the run goes on listening for it). */
  redo(): void;
}

/**
 * @param run - The run, or null.
 * @param onRealInput - True on a real input whose voltages the user sets by hand.
 * @param record - The unit's record, when one is open.
 * @param send - Sends a run event to the engine.
 * @param sendRedo - Sends the redo of step 1 (with the undo offer).
 */
export function useFirstStep(
  run: RunState | null,
  onRealInput: boolean,
  record: UnitRecord | null,
  send: (e: UserRunEvent) => void,
  sendRedo: (e: UserRunEvent) => void,
): FirstStep {
  const [confirmed, setConfirmed] = useState<string | null>(null);
  /** The first capture the run was paused for, so that it is paused once and resumed by the answer. */
  const heldFor = useRef<string | null>(null);
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
  const needsAnswer = onRealInput && key !== null && confirmed !== key && known === null;
  const phase = run?.phase ?? null;
  const active = phase !== null && phase !== 'finished' && phase !== 'aborted';

  useEffect(() => {
    if (!needsAnswer || !active || key === null || heldFor.current === key) return;
    heldFor.current = key;
    if (phase !== 'paused') send({ type: 'pause' });
  }, [needsAnswer, active, key, phase, send]);

  const holding = needsAnswer && phase === 'paused' && heldFor.current === key;
  const release = useCallback(() => {
    if (phase === 'paused' && heldFor.current !== null) send({ type: 'resume' });
    heldFor.current = null;
  }, [phase, send]);
  const confirm = useCallback(() => {
    setConfirmed(key);
    release();
  }, [key, release]);
  const redo = useCallback(() => {
    sendRedo({ type: 'redo', stepIndex: 0 });
    release();
  }, [sendRedo, release]);
  return {
    step: first?.capture ? { volts: first.nominalVolts, hz: first.capture.hz } : null,
    needsAnswer,
    holding,
    known: onRealInput ? known : null,
    confirm,
    redo,
  };
}
