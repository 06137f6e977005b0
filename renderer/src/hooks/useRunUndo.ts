/**
 * Nothing thrown away without a way back: Close run, Redo of a captured step and Restart keep the run as
 * it was, and Undo puts it back (the engine restores it with `run-restore`).
 */
import { useCallback, useState } from 'react';
import type { RunState } from '../../../dsp/calibration/index.ts';
import type { EngineClient } from '../engine/client.ts';
import type { UserRunEvent } from '../engine/protocol.ts';
import { capturedCount } from './useRunAutosave.ts';

/** What Undo would put back. */
export interface UndoOffer {
  readonly text: string;
  readonly state: RunState;
}

/**
 * @param client - The engine.
 * @param store - Where the autosave lives (cleared once a closed run's Undo is dismissed).
 * @param run - The run now.
 * @param send - Sends a run event.
 */
export function useRunUndo(
  client: EngineClient,
  store: { clearAutosave(): unknown },
  run: RunState | null,
  send: (e: UserRunEvent) => void,
) {
  const [undo, setUndo] = useState<UndoOffer | null>(null);

  /** Sends a run event; one that drops a capture (Redo of a captured step) can be undone. */
  const sendWithUndo = useCallback(
    (e: UserRunEvent) => {
      if (run && e.type === 'redo' && run.steps[e.stepIndex]?.capture) {
        setUndo({ text: `Step ${e.stepIndex + 1} is being measured again.`, state: run });
      }
      send(e);
    },
    [run, send],
  );

  /** Keeps the run before it is replaced by a new one. */
  const beforeRestart = useCallback(() => {
    if (run && capturedCount(run) > 0) {
      setUndo({ text: `The previous run (${capturedCount(run)} captured steps) was replaced.`, state: run });
    }
  }, [run]);

  const closeRun = useCallback(() => {
    if (run && capturedCount(run) > 0) {
      setUndo({ text: `Run closed with ${capturedCount(run)} captured steps.`, state: run });
    } else void store.clearAutosave();
    client.send({ type: 'run-close' });
  }, [run, client, store]);

  const doUndo = useCallback(() => {
    if (!undo) return;
    client.send({ type: 'run-restore', state: undo.state });
    setUndo(null);
  }, [undo, client]);

  const dismiss = useCallback(() => {
    setUndo(null);
    if (!run) void store.clearAutosave();
  }, [run, store]);

  return { undo, sendWithUndo, beforeRestart, closeRun, doUndo, dismiss };
}
