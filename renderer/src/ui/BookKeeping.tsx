/**
 * Keeping the unit book safe: back it up as one file, restore a backup (merging, and asking before
 * anything that differs is added), the trash of deleted records and runs, and the entries that cannot be
 * read (kept as they are, listed here so nobody thinks they are gone).
 */
import { useCallback, useEffect, useRef, useState } from 'react';
import type {
  RecordList,
  RestoreConflict,
  RestoreCounts,
  RestorePolicy,
  UnitRecord,
} from '../../../main/api-types.ts';
import type { RecordStore, RestoreRequest } from '../storage/store.ts';

export interface BookKeepingProps {
  store: RecordStore;
  /** The record open in the unit book, or null. */
  openRecord: UnitRecord | null;
  onOpenRecord(r: UnitRecord | null): void;
  /** Called after anything in the book changed (the list should be read again). */
  onChanged(): void;
  /** Changes whenever the book's list was read again, so this reads the trash again too. */
  refreshKey: unknown;
}

function countsText(c: RestoreCounts): string {
  const parts = [
    c.added > 0 && `${c.added} record${c.added === 1 ? '' : 's'} added`,
    c.merged > 0 && `${c.merged} merged (new runs added)`,
    c.unchanged > 0 && `${c.unchanged} already the same`,
    c.copied > 0 && `${c.copied} kept as separate copies`,
    c.skipped > 0 && `${c.skipped} left out`,
    c.driftLogs > 0 && `${c.driftLogs} drift log${c.driftLogs === 1 ? '' : 's'}`,
    c.keptAside > 0 && `${c.keptAside} unreadable entr${c.keptAside === 1 ? 'y' : 'ies'} kept aside`,
  ].filter(Boolean);
  return parts.length > 0 ? parts.join(', ') : 'nothing new';
}

export function BookKeeping(p: BookKeepingProps) {
  const [book, setBook] = useState<RecordList | null>(null);
  const [message, setMessage] = useState<{ kind: 'info' | 'error'; text: string } | null>(null);
  const [pending, setPending] = useState<{
    request: RestoreRequest;
    fileName: string;
    conflicts: RestoreConflict[];
  } | null>(null);
  const fileInput = useRef<HTMLInputElement>(null);
  const { store, onChanged } = p;

  const reload = useCallback(async () => {
    const r = await store.listBook();
    if (r.ok) setBook(r.value);
  }, [store]);
  useEffect(() => {
    void reload();
  }, [reload, p.refreshKey]);

  const backup = async () => {
    const r = await store.backupBook();
    if (!r.ok) setMessage({ kind: 'error', text: r.error.message });
    else if (r.value.kind === 'saved')
      setMessage({
        kind: 'info',
        text: `Backed up ${r.value.records} record${r.value.records === 1 ? '' : 's'} and ${r.value.driftLogs} drift log${r.value.driftLogs === 1 ? '' : 's'} to ${r.value.fileName}.`,
      });
  };

  const restore = async (request: RestoreRequest) => {
    const r = await store.restoreBook(request);
    if (!r.ok) {
      setMessage({ kind: 'error', text: r.error.message });
      return;
    }
    const v = r.value;
    if (v.kind === 'cancelled') return;
    if (v.kind === 'conflicts') {
      setPending({
        request: { ...request, token: v.token },
        fileName: v.fileName,
        conflicts: v.conflicts,
      });
      setMessage(null);
      return;
    }
    setPending(null);
    setMessage({ kind: 'info', text: `Restored ${v.fileName}: ${countsText(v.counts)}.` });
    onChanged();
    void reload();
  };

  const resolve = (policy: RestorePolicy) => {
    if (!pending) return;
    void restore({ ...pending.request, policy });
  };

  const pickFile = async (files: FileList | null) => {
    const file = files?.[0];
    if (!file) return;
    try {
      const text = await file.text();
      await restore({ policy: 'ask', file: { name: file.name, text } });
    } catch (err) {
      setMessage({ kind: 'error', text: `Could not read ${file.name}: ${(err as Error).message}` });
    } finally {
      if (fileInput.current) fileInput.current.value = '';
    }
  };

  const act = async (
    what: Promise<{ ok: true; value: UnitRecord } | { ok: false; error: { message: string } }>,
  ) => {
    const r = await what;
    if (!r.ok) setMessage({ kind: 'error', text: r.error.message });
    else {
      if (p.openRecord?.id === r.value.id || p.openRecord === null) p.onOpenRecord(r.value);
      onChanged();
      void reload();
    }
  };

  const open = p.openRecord;
  const trashedRuns = open?.trash ?? [];
  return (
    <section className="book-keeping" data-testid="book-keeping">
      <h3>Keeping the book</h3>
      <div className="row">
        <button onClick={() => void backup()} data-testid="book-backup">
          Back up the book
        </button>
        {store.kind === 'browser' ? (
          <>
            <button onClick={() => fileInput.current?.click()} data-testid="book-restore">
              Restore from a backup…
            </button>
            <input
              ref={fileInput}
              type="file"
              accept=".json,application/json"
              hidden
              data-testid="book-restore-file"
              onChange={(e) => void pickFile(e.target.files)}
            />
          </>
        ) : (
          <button onClick={() => void restore({ policy: 'ask' })} data-testid="book-restore">
            Restore from a backup…
          </button>
        )}
      </div>
      {pending && (
        <div className="message warn" role="alert" data-testid="restore-conflicts">
          <p>
            {pending.fileName}: {pending.conflicts.length} record
            {pending.conflicts.length === 1 ? ' differs' : 's differ'} from the book’s. Nothing has been
            restored yet.
          </p>
          <ul>
            {pending.conflicts.map((c) => (
              <li key={c.id}>
                {c.unitName}: {c.reason}
              </li>
            ))}
          </ul>
          <div className="row">
            <button onClick={() => resolve('copy')} data-testid="restore-copy">
              Restore, keeping these as separate copies
            </button>
            <button onClick={() => resolve('skip')}>Restore the rest, leave these out</button>
            <button className="quiet" onClick={() => setPending(null)}>
              Cancel
            </button>
          </div>
        </div>
      )}
      {message && (
        <p className={`message ${message.kind}`} data-testid="book-message">
          {message.text}
        </p>
      )}
      {open && open.runs.length > 0 && (
        <details>
          <summary>Move a run of {open.unitName} to the trash</summary>
          <ul className="runs">
            {open.runs.map((r) => (
              <li key={r.id}>
                {r.label} · {r.takenAt.slice(0, 16).replace('T', ' ')}{' '}
                <button className="small quiet" onClick={() => void act(store.deleteRun(open.id, r.id))}>
                  Move to trash
                </button>
              </li>
            ))}
          </ul>
        </details>
      )}
      {(trashedRuns.length > 0 || (book?.trashed?.length ?? 0) > 0) && (
        <>
          <h3>Trash</h3>
          <ul className="runs" data-testid="book-trash">
            {trashedRuns.map((t) => (
              <li key={t.run.id}>
                Run {t.run.label} of {open?.unitName} · deleted {t.deletedAt.slice(0, 16).replace('T', ' ')}{' '}
                <button
                  className="small"
                  onClick={() => open && void act(store.restoreRun(open.id, t.run.id))}
                >
                  Restore
                </button>
              </li>
            ))}
            {(book?.trashed ?? []).map((r) => (
              <li key={r.id}>
                {r.unitName} ({r.runCount} run{r.runCount === 1 ? '' : 's'}) · deleted{' '}
                {r.deletedAt.slice(0, 16).replace('T', ' ')}{' '}
                <button className="small" onClick={() => void act(store.undeleteRecord(r.id))}>
                  Restore
                </button>
              </li>
            ))}
          </ul>
        </>
      )}
      {book && book.problems.length > 0 && (
        <>
          <h3>Kept but unreadable</h3>
          <ul className="runs" data-testid="book-problems">
            {book.problems.map((q) => (
              <li key={q.file} className="small">
                {q.message}
              </li>
            ))}
          </ul>
        </>
      )}
    </section>
  );
}
