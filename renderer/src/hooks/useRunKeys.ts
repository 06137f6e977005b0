/**
 * The run's one-key commands (Space, R, S, B, P, Enter), active on the Span run tab while a run is open
 * and the focus is not in a text field.
 */
import { useEffect, useRef } from 'react';
import type { RunState } from '../../../dsp/calibration/index.ts';
import type { UserRunEvent } from '../engine/protocol.ts';

/** The keys of the run's commands (shown on the buttons). */
export const RUN_KEYS = {
  captureNow: ' ',
  redo: 'r',
  skip: 's',
  back: 'b',
  pause: 'p',
  accept: 'Enter',
} as const;

/**
 * Whether a key press belongs to the focused control rather than to the run: any key in a text field,
 * and Space or Enter on a button or link (they press it).
 */
export function isTypingTarget(t: EventTarget | null, key = ''): boolean {
  const el = t as HTMLElement | null;
  if (!el || typeof el.tagName !== 'string') return false;
  if (el.tagName === 'INPUT' || el.tagName === 'TEXTAREA' || el.tagName === 'SELECT' || el.isContentEditable)
    return true;
  return (
    (el.tagName === 'BUTTON' || el.tagName === 'A' || el.tagName === 'SUMMARY') &&
    (key === ' ' || key === 'Enter')
  );
}

/**
 * The step "Redo" acts on: the current step while a pitch warning is shown, else the step captured last.
 *
 * @example redoTarget(run) // 2 after step 3 was captured
 */
export function redoTarget(s: RunState): number {
  return s.warning ? s.current : (s.lastCapturedStep ?? s.current);
}

/**
 * The run event a key asks for, or null.
 *
 * @param key - `KeyboardEvent.key`.
 * @param s - The run.
 * @example eventForKey('p', run) // { type: 'pause' } while the run is going
 */
export function eventForKey(key: string, s: RunState): UserRunEvent | null {
  const k = key.length === 1 ? key.toLowerCase() : key;
  if (k === RUN_KEYS.captureNow) return { type: 'capture-now' };
  if (k === RUN_KEYS.redo) return { type: 'redo', stepIndex: redoTarget(s) };
  if (k === RUN_KEYS.skip) return { type: 'skip' };
  if (k === RUN_KEYS.back) return { type: 'back' };
  if (k === RUN_KEYS.pause) return { type: s.phase === 'paused' ? 'resume' : 'pause' };
  if (k === RUN_KEYS.accept && s.warning) return { type: 'accept-pitch' };
  return null;
}

/**
 * Listens for the run's keys on the window.
 *
 * @param run - The run, or null.
 * @param enabled - False off the Span run tab (or while a dialog has the keys).
 * @param send - Sends the event to the engine.
 * @param intercept - Called first; returning true swallows the key (a pending question's own keys).
 */
export function useRunKeys(
  run: RunState | null,
  enabled: boolean,
  send: (e: UserRunEvent) => void,
  intercept?: (key: string) => boolean,
): void {
  const runRef = useRef<RunState | null>(run);
  runRef.current = run;
  const interceptRef = useRef(intercept);
  interceptRef.current = intercept;
  useEffect(() => {
    const onKey = (e: KeyboardEvent) => {
      if (isTypingTarget(e.target, e.key)) return;
      if (e.ctrlKey || e.metaKey || e.altKey) return;
      const s = runRef.current;
      if (!s || !enabled) return;
      if (interceptRef.current?.(e.key)) {
        e.preventDefault();
        return;
      }
      const ev = eventForKey(e.key, s);
      if (ev) {
        e.preventDefault();
        send(ev);
      }
    };
    window.addEventListener('keydown', onKey);
    return () => window.removeEventListener('keydown', onKey);
  }, [send, enabled]);
}
