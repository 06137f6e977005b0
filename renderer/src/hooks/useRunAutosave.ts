/**
 * Autosave of the run in progress and the offer to resume it after a reload. The autosave itself is the
 * store's (`store.autosave`); beside it this hook remembers which source the run was measured on, so a
 * resumed run comes back on its own source (the simulator with its demo unit, or the sound card).
 */
import { useCallback, useEffect, useMemo, useState } from 'react';
import {
  isRunActive,
  serializeRun,
  validateRunState,
  type RunState,
} from '../../../dsp/calibration/index.ts';
import type { JsonValue } from '../../../main/api-types.ts';
import type { EngineClient } from '../engine/client.ts';
import { AutosaveQueue, type AutosaveStatus } from '../storage/autosave.ts';
import type { RecordStore } from '../storage/store.ts';
import type { SourceKind } from './useAudioInput.ts';
import { pageStorage } from './pageStorage.ts';

/** Where the source of the autosaved run is kept (beside the store's autosave). */
export const AUTOSAVE_SOURCE_KEY = 'spanmeter.autosave-source.v1';

/** The source a run was measured on. */
export interface RunSource {
  readonly kind: SourceKind;
  /** Demo unit id when the source was the simulator. */
  readonly unitId?: string;
}

/** Number of captured steps of a run. */
export function capturedCount(s: RunState): number {
  return s.steps.filter((x) => x.capture !== null).length;
}

/**
 * Reads the remembered source of the autosaved run; null when none or unreadable.
 *
 * @example parseRunSource('{"kind":"sim","unitId":"ol3-0417"}') // { kind: 'sim', unitId: 'ol3-0417' }
 */
export function parseRunSource(json: string | null): RunSource | null {
  if (!json) return null;
  try {
    const v = JSON.parse(json) as { kind?: unknown; unitId?: unknown };
    if (v.kind !== 'sim' && v.kind !== 'device') return null;
    return typeof v.unitId === 'string' ? { kind: v.kind, unitId: v.unitId } : { kind: v.kind };
  } catch {
    return null;
  }
}

/** The offer shown above the run when an autosaved run was found. */
export interface ResumeOffer {
  readonly state: RunState;
  readonly text: string;
  readonly source: RunSource | null;
}

/**
 * Autosaves the run on every new capture through one AutosaveQueue (storage/autosave.ts: saves in order,
 * retried, with a visible status) and offers the saved run back after a reload.
 *
 * @param client - The engine (its run messages are watched).
 * @param store - Where the autosave goes.
 * @param current - The source in use now (remembered with each autosave).
 * @param onSource - Called with the saved run's source before it is restored.
 */
export function useRunAutosave(
  client: EngineClient,
  store: RecordStore,
  current: RunSource,
  onSource: (s: RunSource) => void,
): {
  offer: ResumeOffer | null;
  resume(): void;
  discard(): void;
  dismiss(): void;
  /** What the autosave is doing, for the status line. */
  status: AutosaveStatus;
  /** Clears the autosave (after the queue's pending save, so an old run never comes back). */
  clear(): void;
} {
  const [offer, setOffer] = useState<ResumeOffer | null>(null);
  const [status, setStatus] = useState<AutosaveStatus>({ kind: 'idle' });
  const queue = useMemo(
    () => new AutosaveQueue<JsonValue>((s, seq) => store.autosave(s, seq), setStatus, 'the run'),
    [store],
  );
  const currentKey = JSON.stringify(current);

  useEffect(() => {
    let last = -1;
    return client.onMessage((m) => {
      const run = m.type === 'run' ? m.run : m.type === 'tick' ? m.run : undefined;
      if (!run) return;
      const n = capturedCount(run.state);
      if (n !== last) {
        if (n > 0) {
          queue.push(JSON.parse(serializeRun(run.state)) as JsonValue);
          try {
            pageStorage()?.setItem(AUTOSAVE_SOURCE_KEY, currentKey);
          } catch {
            // A full or refused storage only loses the source hint; the run itself is the store's.
          }
        }
        last = n;
      }
    });
  }, [client, queue, currentKey]);

  useEffect(() => {
    void (async () => {
      const r = await store.loadAutosave();
      if (!r.ok || r.value.kind !== 'found') return;
      const v = validateRunState(r.value.state);
      if (v.kind !== 'ok' || capturedCount(v.state) === 0) return;
      const fin = !isRunActive(v.state);
      let source: RunSource | null = null;
      try {
        source = parseRunSource(pageStorage()?.getItem(AUTOSAVE_SOURCE_KEY) ?? null);
      } catch {
        source = null;
      }
      const on = source ? (source.kind === 'sim' ? ' on the simulator' : ' on the audio input') : '';
      setOffer({
        state: v.state,
        source,
        text: `${fin ? 'The last run' : 'An unfinished run'}${on} from ${new Date(r.value.savedAt).toLocaleString()}: ${capturedCount(v.state)} of ${v.state.steps.length} steps captured.`,
      });
    })();
  }, [store]);

  const resume = useCallback(() => {
    if (!offer) return;
    if (offer.source) onSource(offer.source);
    client.send({ type: 'run-restore', state: offer.state });
    setOffer(null);
  }, [offer, onSource, client]);

  const clear = useCallback(() => {
    void queue.clear(() => store.clearAutosave());
  }, [queue, store]);

  const discard = useCallback(() => {
    clear();
    setOffer(null);
  }, [clear]);

  return { offer, resume, discard, dismiss: () => setOffer(null), status, clear };
}
