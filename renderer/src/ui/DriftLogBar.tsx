/**
 * The Hold & drift log kept in the unit book: autosaved while the hold runs (every few seconds and when it
 * stops; one save in flight, the newest wins), read back after a reload, and exported as CSV or JSON.
 */
import { useEffect, useMemo, useRef, useState } from 'react';
import type { DriftLog } from '../../../main/api-types.ts';
import type { DriftView } from '../engine/protocol.ts';
import { AutosaveQueue, type AutosaveStatus } from '../storage/autosave.ts';
import { driftLogCsv, driftLogFromView, driftLogJson, newDriftLogId } from '../storage/drift-log.ts';
import type { RecordStore } from '../storage/store.ts';
import { DriftChart } from './charts.tsx';

/** Seconds between autosaves of a running hold. */
export const DRIFT_AUTOSAVE_SECONDS = 5;

/** What the drift screen needs to show and export the kept log. */
export interface DriftKeeper {
  readonly store: RecordStore;
  readonly status: AutosaveStatus;
  /** The log as last built (the running hold) or read back (after a reload), or null. */
  readonly log: DriftLog | null;
  /** True while a hold is running. */
  readonly live: boolean;
}

/**
 * Keeps the drift log: call it once in the app (it must run whichever tab is shown).
 * @example const driftKeeper = useDriftKeeper(store, view.drift, info.unitName)
 */
export function useDriftKeeper(store: RecordStore, drift: DriftView | null, unitName: string): DriftKeeper {
  const [status, setStatus] = useState<AutosaveStatus>({ kind: 'idle' });
  const [log, setLog] = useState<DriftLog | null>(null);
  const queue = useMemo(
    () => new AutosaveQueue<DriftLog>((l) => store.saveDriftLog(l), setStatus, 'the drift log'),
    [store],
  );
  const hold = useRef<{ id: string; startedAt: string; lastPush: number; last: DriftView } | null>(null);

  // After a reload: the newest kept log.
  useEffect(() => {
    let live = true;
    void (async () => {
      const list = await store.listDriftLogs();
      if (!live || !list.ok || list.value.length === 0 || hold.current) return;
      const r = await store.loadDriftLog(list.value[0].id);
      if (live && r.ok && !hold.current) setLog(r.value);
    })();
    return () => {
      live = false;
    };
  }, [store]);

  useEffect(() => {
    const push = (view: DriftView, h: { id: string; startedAt: string }) => {
      const seq = Date.now();
      const built = driftLogFromView(view, {
        id: h.id,
        startedAt: h.startedAt,
        seq,
        savedAt: new Date().toISOString(),
        unitName: unitName.trim() || undefined,
      });
      setLog(built);
      if (built.points.length > 0) queue.push({ ...built, seq: Math.max(seq, built.seq) });
    };
    if (drift === null) {
      const h = hold.current;
      if (h) push(h.last, h); // the hold stopped: keep its last readings too
      hold.current = null;
      return;
    }
    if (hold.current === null) {
      const started = new Date();
      hold.current = {
        id: newDriftLogId(started),
        startedAt: started.toISOString(),
        lastPush: 0,
        last: drift,
      };
    }
    const h = hold.current;
    h.last = drift;
    const now = Date.now();
    if (now - h.lastPush >= DRIFT_AUTOSAVE_SECONDS * 1000) {
      h.lastPush = now;
      push(drift, h);
    }
  }, [drift, queue, unitName]);

  return { store, status, log, live: drift !== null };
}

/** Status, exports and (after a reload) the chart of the kept drift log. */
export function DriftLogBar({ keeper }: { keeper: DriftKeeper }) {
  const [message, setMessage] = useState<{ kind: 'info' | 'error'; text: string } | null>(null);
  const { log, status } = keeper;
  const exportAs = async (format: 'csv' | 'json') => {
    if (!log) return;
    const r = await keeper.store.exportFile({
      format,
      suggestedName: `${log.id}.${format}`,
      content: format === 'csv' ? driftLogCsv(log) : driftLogJson(log),
    });
    if (!r.ok) setMessage({ kind: 'error', text: r.error.message });
    else if (r.value.kind === 'saved') setMessage({ kind: 'info', text: `Exported ${r.value.fileName}.` });
  };
  return (
    <div className="drift-log" data-testid="drift-log">
      {status.kind === 'failed' ? (
        <p className="message error" role="alert">
          {status.message}
        </p>
      ) : (
        <p className="dim small" data-testid="drift-log-status">
          {log === null
            ? 'The hold’s readings are kept in the unit book while it runs.'
            : `${keeper.live ? 'This hold' : 'Last hold'} at ${log.volts} V, started ${log.startedAt.slice(0, 16).replace('T', ' ')} UTC: ${log.points.length} readings${status.kind === 'saved' ? ', kept' : status.kind === 'saving' ? ', saving…' : ', kept'}.`}
        </p>
      )}
      {!keeper.live && log && log.points.length > 0 && (
        <DriftChart points={log.points.map(([t, cents]) => ({ t, cents }))} />
      )}
      <div className="row">
        <button disabled={!log} onClick={() => void exportAs('csv')} data-testid="drift-export-csv">
          Export log as CSV
        </button>
        <button disabled={!log} onClick={() => void exportAs('json')} data-testid="drift-export-json">
          Export log as JSON
        </button>
      </div>
      {message && <p className={`message ${message.kind}`}>{message.text}</p>}
    </div>
  );
}
