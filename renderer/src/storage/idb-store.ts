/**
 * The unit book in a plain browser (`npm run web`): IndexedDB through `idb`, one entry per record, every
 * change in one transaction, under the same rules as the desktop store (`main/record-book.ts`): runs only
 * added, a trash for runs and records, revisions with stale saves merged or refused.
 *
 * Entries are kept as the record's JSON text, so an entry that cannot be read (damaged, or written by a
 * newer Spanmeter) stays byte for byte as it is: it is listed as a problem and never overwritten (a save
 * under its id first moves it aside to `<id>.corrupt-<time>`).
 *
 * On first start the book of older versions (one JSON blob in `localStorage`) is copied in, one entry per
 * record; a blob that cannot be read is kept whole as one unreadable entry. The blob is removed only once
 * every entry has been read back from IndexedDB and matches it.
 *
 * IndexedDB transactions on the same store run one after the other, across tabs too, so two tabs saving
 * the same unit are serialized and the revision check sees the other tab's save.
 */
import { wrap, type IDBPDatabase } from 'idb';
import {
  applyDeleteRecord,
  applyDeleteRun,
  applyRestoreRun,
  applySave,
  applyUndeleteRecord,
  buildBackup,
  compareSummaries,
  copyForRestore,
  driftLogWins,
  parseBackup,
  parseRecordText,
  planRestore,
  summarizeDriftLog,
  summarizeRecord,
  textToBase64,
  base64ToBytes,
  type BookChange,
  type UnreadableEntry,
} from '../../../main/record-book.ts';
import {
  DriftLogSchema,
  UnitRecordDraftSchema,
  type DriftLog,
  type IpcErrorCode,
  type IpcResult,
  type JsonValue,
  type RecordProblem,
  type RecordSummary,
  type RestoreConflict,
  type RestoreCounts,
  type UnitRecord,
} from '../../../main/ipc-contract.ts';
import { formatIssues } from '../../../main/ipc.ts';
import { newRecordId } from '../../../main/record-id.ts';
import { STORAGE_KEYS, type Downloader, type KeyValueStorage, type RecordStore } from './store.ts';

/** The database name and its object stores. */
export const DB_NAME = 'spanmeter-book';
const DB_VERSION = 1;
const RECORDS = 'records';
const DRIFT = 'drift-logs';
const META = 'meta';

/** Options of {@link browserStore} (injectable for tests). */
export interface BrowserStoreOptions {
  /** `window.indexedDB`, or fake-indexeddb's `IDBFactory` in tests. */
  readonly indexedDB: IDBFactory;
  /** Where the book of older versions may be (`window.localStorage`), or null. */
  readonly legacy?: KeyValueStorage | null;
  readonly download: Downloader;
  readonly now?: () => Date;
  readonly random?: () => number;
  /** Database name (default {@link DB_NAME}). */
  readonly dbName?: string;
}

class BookError extends Error {
  constructor(
    readonly code: IpcErrorCode,
    message: string,
  ) {
    super(message);
  }
}

function fail<T>(code: IpcErrorCode, message: string): IpcResult<T> {
  return { ok: false, error: { code, message } };
}

/** Runs `task`, turning a thrown error into a failure with a message that says what to do. */
async function guard<T>(what: string, task: () => Promise<T>): Promise<IpcResult<T>> {
  try {
    return { ok: true, value: await task() };
  } catch (err) {
    if (err instanceof BookError) return fail(err.code, err.message);
    const e = err as { name?: string; message?: string } | null;
    const quota = e?.name === 'QuotaExceededError';
    return fail(
      'io-error',
      `Could not ${what} in this browser: ${e?.message ?? String(err)}.${quota ? ' The browser’s storage is full: back up the unit book, free some space and try again.' : ' Nothing was changed; try again, and back up the unit book.'}`,
    );
  }
}

function asideStamp(date: Date): string {
  return date.toISOString().replace(/[-:]/g, '');
}

/**
 * The browser store.
 * @example const store = browserStore({ indexedDB: window.indexedDB, legacy: window.localStorage, download: pageDownload })
 */
export function browserStore(options: BrowserStoreOptions): RecordStore {
  const { download } = options;
  const now = options.now ?? (() => new Date());
  const random = options.random ?? Math.random;
  const randomBytes = (n: number) => Uint8Array.from({ length: n }, () => Math.floor(random() * 256) % 256);
  const dbName = options.dbName ?? DB_NAME;

  let opened: Promise<IDBPDatabase> | null = null;
  function db(): Promise<IDBPDatabase> {
    opened ??= (async () => {
      const request = options.indexedDB.open(dbName, DB_VERSION);
      request.onupgradeneeded = () => {
        const raw = request.result;
        for (const name of [RECORDS, DRIFT, META])
          if (!raw.objectStoreNames.contains(name)) raw.createObjectStore(name);
      };
      const database = (await wrap(request)) as IDBPDatabase;
      await migrate(database);
      return database;
    })();
    opened.catch(() => {
      opened = null; // try again on the next call
    });
    return opened;
  }

  /** Copies the localStorage book in (once), then removes the blob when every entry reads back the same. */
  async function migrate(database: IDBPDatabase): Promise<void> {
    const legacy = options.legacy ?? null;
    if (legacy === null) return;
    let blob: string | null;
    let autosave: string | null;
    try {
      blob = legacy.getItem(STORAGE_KEYS.records);
      autosave = legacy.getItem(STORAGE_KEYS.autosave);
    } catch {
      return;
    }
    if (blob === null && autosave === null) return;
    const entries: [string, string][] = [];
    if (blob !== null) {
      let parsed: unknown;
      try {
        parsed = JSON.parse(blob);
      } catch {
        parsed = undefined;
      }
      if (typeof parsed === 'object' && parsed !== null && !Array.isArray(parsed)) {
        Object.entries(parsed as Record<string, unknown>).forEach(([key, value], i) => {
          const text = JSON.stringify(value) ?? 'null';
          const ok = parseRecordText(text);
          if (ok.kind === 'ok' && ok.record.id === key) entries.push([key, text]);
          else if (ok.kind === 'unsupported' && /^[a-z0-9][a-z0-9-]{0,63}$/.test(key))
            entries.push([key, text]);
          else entries.push([`migrated-${i}.corrupt-${asideStamp(now())}`, text]);
        });
      } else {
        // The whole blob is unreadable: keep it whole, byte for byte.
        entries.push([`localstorage-book.corrupt-${asideStamp(now())}`, blob]);
      }
    }
    const tx = database.transaction([RECORDS, META], 'readwrite');
    const records = tx.objectStore(RECORDS);
    const meta = tx.objectStore(META);
    const done = (await meta.get('migration')) as { confirmed?: boolean } | undefined;
    if (done === undefined) {
      for (const [key, text] of entries) {
        const there = (await records.get(key)) as string | undefined;
        if (there === undefined) await records.put(text, key);
      }
      if (autosave !== null && (await meta.get('autosave')) === undefined)
        await meta.put(autosave, 'autosave');
      await meta.put({ from: 'localStorage', at: now().toISOString(), entries: entries.length }, 'migration');
    }
    await tx.done;
    // Confirm: every entry reads back as it was; only then is the old blob removed.
    const check = database.transaction([RECORDS], 'readonly').objectStore(RECORDS);
    for (const [key, text] of entries) {
      const back = (await check.get(key)) as string | undefined;
      if (back === undefined) return; // keep the blob: try again next start
      if (back !== text && !key.includes('.corrupt-')) {
        const a = parseRecordText(back);
        if (a.kind !== 'ok') return;
      }
    }
    try {
      legacy.removeItem(STORAGE_KEYS.records);
      legacy.removeItem(STORAGE_KEYS.autosave);
    } catch {
      // the blob stays; harmless, the migration is already marked done
    }
  }

  type Current =
    | { kind: 'none' }
    | { kind: 'ok'; record: UnitRecord }
    | { kind: 'corrupt'; reason: string; text: string }
    | { kind: 'unsupported'; reason: string };

  function classify(id: string, text: string | undefined): Current {
    if (text === undefined) return { kind: 'none' };
    if (typeof text !== 'string') return { kind: 'corrupt', reason: 'it is not text', text: String(text) };
    const parsed = parseRecordText(text);
    if (parsed.kind === 'unsupported') return { kind: 'unsupported', reason: parsed.reason };
    if (parsed.kind === 'corrupt') return { kind: 'corrupt', reason: parsed.reason, text };
    if (parsed.record.id !== id)
      return { kind: 'corrupt', reason: `its id "${parsed.record.id}" does not match its key`, text };
    return { kind: 'ok', record: parsed.record };
  }

  /**
   * One change to one record in one transaction: read, decide (synchronously), write. A damaged entry
   * under the id is moved aside first when `onDamaged` is `aside`; otherwise the change is refused.
   */
  async function change(
    id: string,
    decide: (current: UnitRecord | null, stamp: string) => BookChange,
    onDamaged: 'aside' | 'refuse',
  ): Promise<UnitRecord> {
    const database = await db();
    const tx = database.transaction(RECORDS, 'readwrite');
    const store = tx.objectStore(RECORDS);
    try {
      const cur = classify(id, (await store.get(id)) as string | undefined);
      if (cur.kind === 'unsupported')
        throw new BookError(
          'unsupported-schema-version',
          `The record "${id}" was not changed: ${cur.reason}.`,
        );
      if (cur.kind === 'corrupt') {
        if (onDamaged === 'refuse')
          throw new BookError(
            'corrupt-record',
            `The record "${id}" is damaged (${cur.reason}); it is kept as it is.`,
          );
        await store.put(cur.text, `${id}.corrupt-${asideStamp(now())}`);
      }
      const result = decide(cur.kind === 'ok' ? cur.record : null, now().toISOString());
      if (result.kind === 'conflict') throw new BookError('conflict', result.message);
      if (result.kind === 'not-found') throw new BookError('not-found', result.message);
      if (result.kind === 'write') await store.put(JSON.stringify(result.record), id);
      await tx.done;
      return result.record;
    } catch (err) {
      try {
        tx.abort();
      } catch {
        // already finished
      }
      await tx.done.catch(() => undefined);
      throw err;
    }
  }

  const missing = (id: string): BookChange => ({
    kind: 'not-found',
    message: `There is no record "${id}" in this browser.`,
  });

  async function freeId(unitName: string): Promise<string> {
    const database = await db();
    for (let i = 0; i < 20; i++) {
      const id = newRecordId(unitName, randomBytes);
      if ((await database.get(RECORDS, id)) === undefined) return id;
    }
    throw new BookError('internal-error', 'could not find a free record id');
  }

  async function allEntries(): Promise<[string, unknown][]> {
    const database = await db();
    const tx = database.transaction(RECORDS, 'readonly');
    const keys = (await tx.store.getAllKeys()) as string[];
    const values = (await tx.store.getAll()) as unknown[];
    await tx.done;
    return keys.map((k, i) => [k, values[i]]);
  }

  async function putDrift(log: DriftLog): Promise<{ savedAt: string; stale: boolean }> {
    const database = await db();
    const tx = database.transaction(DRIFT, 'readwrite');
    const text = (await tx.store.get(log.id)) as string | undefined;
    let stored: DriftLog | null = null;
    if (text !== undefined) {
      let json: unknown;
      try {
        json = JSON.parse(text);
      } catch {
        json = undefined;
      }
      const parsed = DriftLogSchema.safeParse(json);
      if (parsed.success) stored = parsed.data;
      else {
        const version = (json as { schemaVersion?: unknown } | null)?.schemaVersion;
        if (typeof version === 'number' && version > 1) {
          tx.abort();
          await tx.done.catch(() => undefined);
          throw new BookError(
            'unsupported-schema-version',
            `Drift log "${log.id}" was written by a newer Spanmeter; it was left untouched.`,
          );
        }
        await tx.store.put(text, `${log.id}.corrupt-${asideStamp(now())}`);
      }
    }
    if (!driftLogWins(stored, log)) {
      await tx.done;
      return { savedAt: stored?.savedAt ?? log.savedAt, stale: true };
    }
    await tx.store.put(JSON.stringify(log), log.id);
    await tx.done;
    return { savedAt: log.savedAt, stale: false };
  }

  async function readBook(): Promise<{
    records: UnitRecord[];
    unreadable: UnreadableEntry[];
    driftLogs: DriftLog[];
  }> {
    const records: UnitRecord[] = [];
    const unreadable: UnreadableEntry[] = [];
    for (const [key, value] of await allEntries()) {
      const text = typeof value === 'string' ? value : (JSON.stringify(value) ?? 'null');
      const c = key.includes('.corrupt-') ? null : classify(key, text);
      if (c?.kind === 'ok') records.push(c.record);
      else
        unreadable.push({
          file: key,
          reason: c && c.kind !== 'none' ? c.reason : 'a damaged record kept aside',
          base64: textToBase64(text),
        });
    }
    const database = await db();
    const tx = database.transaction(DRIFT, 'readonly');
    const keys = (await tx.store.getAllKeys()) as string[];
    const values = (await tx.store.getAll()) as string[];
    await tx.done;
    const driftLogs: DriftLog[] = [];
    keys.forEach((key, i) => {
      let json: unknown;
      try {
        json = JSON.parse(values[i]);
      } catch {
        json = undefined;
      }
      const parsed = DriftLogSchema.safeParse(json);
      if (parsed.success && !key.includes('.corrupt-')) driftLogs.push(parsed.data);
      else
        unreadable.push({
          file: `drift-${key}`,
          reason: 'an unreadable drift log',
          base64: textToBase64(String(values[i])),
        });
    });
    return { records, unreadable, driftLogs };
  }

  const listBook = () =>
    guard('read the unit book', async () => {
      const records: RecordSummary[] = [];
      const trashed: (RecordSummary & { deletedAt: string })[] = [];
      const problems: RecordProblem[] = [];
      for (const [key, value] of await allEntries()) {
        if (key.includes('.corrupt-')) {
          problems.push({
            file: key,
            code: 'corrupt-record',
            message: `${key} is a damaged record kept aside as it was; Spanmeter never overwrites or deletes it. Back up the unit book to keep a copy you can open in a text editor.`,
          });
          continue;
        }
        const c = classify(key, value as string);
        if (c.kind === 'ok') {
          if (c.record.deletedAt !== undefined)
            trashed.push({ ...summarizeRecord(c.record), deletedAt: c.record.deletedAt });
          else records.push(summarizeRecord(c.record));
        } else if (c.kind === 'unsupported') {
          problems.push({
            file: key,
            code: 'unsupported-schema-version',
            message: `The record "${key}" cannot be opened: ${c.reason}. It is kept as it is.`,
          });
        } else if (c.kind === 'corrupt') {
          problems.push({
            file: key,
            code: 'corrupt-record',
            message: `The record "${key}" is damaged: ${c.reason}. It is kept as it is and never overwritten.`,
          });
        }
      }
      records.sort(compareSummaries);
      trashed.sort((a, b) => (a.deletedAt < b.deletedAt ? 1 : a.deletedAt > b.deletedAt ? -1 : 0));
      return trashed.length > 0 ? { records, problems, trashed } : { records, problems };
    });

  async function restore(text: string, policy: 'ask' | 'skip' | 'copy') {
    const parsed = parseBackup(text);
    if (parsed.kind === 'invalid')
      throw new BookError('invalid-file', `The backup cannot be restored: ${parsed.message}.`);
    const { book } = parsed;
    const counts: RestoreCounts = {
      added: 0,
      merged: 0,
      unchanged: 0,
      copied: 0,
      skipped: 0,
      driftLogs: 0,
      keptAside: 0,
    };
    const database = await db();
    const existingOf = async (id: string): Promise<UnitRecord | 'unreadable' | null> => {
      const c = classify(id, (await database.get(RECORDS, id)) as string | undefined);
      return c.kind === 'none' ? null : c.kind === 'ok' ? c.record : 'unreadable';
    };
    if (policy === 'ask') {
      const conflicts: RestoreConflict[] = [];
      const dry = { ...counts };
      for (const incoming of book.records) {
        const step = planRestore(await existingOf(incoming.id), incoming, now().toISOString());
        if (step.kind === 'conflict')
          conflicts.push({ id: incoming.id, unitName: incoming.unitName, reason: step.reason });
        else if (step.kind === 'add') dry.added++;
        else if (step.kind === 'merge') dry.merged++;
        else dry.unchanged++;
      }
      if (conflicts.length > 0) return { kind: 'conflicts' as const, conflicts, counts: dry };
    }
    for (const incoming of book.records) {
      const tx = database.transaction(RECORDS, 'readwrite');
      const c = classify(incoming.id, (await tx.store.get(incoming.id)) as string | undefined);
      const stamp = now().toISOString();
      const step = planRestore(
        c.kind === 'none' ? null : c.kind === 'ok' ? c.record : 'unreadable',
        incoming,
        stamp,
      );
      if (step.kind === 'add' || step.kind === 'merge') {
        await tx.store.put(JSON.stringify(step.record), incoming.id);
        counts[step.kind === 'add' ? 'added' : 'merged']++;
      } else if (step.kind === 'unchanged') counts.unchanged++;
      else if (policy !== 'copy') counts.skipped++;
      await tx.done;
      if (step.kind === 'conflict' && policy === 'copy') {
        const id = await freeId(incoming.unitName);
        await database.put(RECORDS, JSON.stringify(copyForRestore(incoming, id, stamp)), id);
        counts.copied++;
      }
    }
    for (const log of book.driftLogs) if (!(await putDrift(log)).stale) counts.driftLogs++;
    if (book.unreadable.length > 0) {
      const known = new Set((await readBook()).unreadable.map((u) => u.base64));
      for (const entry of book.unreadable) {
        if (known.has(entry.base64)) continue;
        const base =
          entry.file
            .replace(/\.json$/, '')
            .replace(/\.corrupt-.*$/, '')
            .replace(/[^a-z0-9-]/g, '-')
            .slice(0, 64) || 'restored';
        const bytes = base64ToBytes(entry.base64);
        await database.put(
          RECORDS,
          new TextDecoder().decode(bytes),
          `${base}.corrupt-${asideStamp(now())}-${counts.keptAside}`,
        );
        known.add(entry.base64);
        counts.keptAside++;
      }
    }
    return { kind: 'restored' as const, counts };
  }

  return {
    kind: 'browser',
    listBook,
    listRecords: async () => {
      const r = await listBook();
      return r.ok ? { ok: true, value: r.value.records } : r;
    },
    loadRecord: (id) =>
      guard('read the record', async () => {
        const database = await db();
        const c = classify(id, (await database.get(RECORDS, id)) as string | undefined);
        if (c.kind === 'none')
          throw new BookError('not-found', `There is no record "${id}" in this browser.`);
        if (c.kind === 'unsupported')
          throw new BookError(
            'unsupported-schema-version',
            `The record "${id}" cannot be opened: ${c.reason}. It is kept as it is.`,
          );
        if (c.kind === 'corrupt')
          throw new BookError(
            'corrupt-record',
            `The record "${id}" is damaged: ${c.reason}. It is kept as it is.`,
          );
        if (c.record.deletedAt !== undefined)
          throw new BookError(
            'not-found',
            `There is no record "${id}" in this browser (it is in the trash; restore it from there).`,
          );
        return c.record;
      }),
    saveRecord: async (draft) => {
      const checked = UnitRecordDraftSchema.safeParse(draft);
      if (!checked.success)
        return fail('invalid-payload', `The record is not valid: ${formatIssues(checked.error)}`);
      const d = checked.data;
      return guard('store the record', async () => {
        const id = d.id ?? (await freeId(d.unitName));
        return change(id, (current, stamp) => applySave(current, d, id, stamp), 'aside');
      });
    },
    deleteRecord: (id) =>
      guard('delete the record', async () => {
        await change(
          id,
          (r, stamp) =>
            r === null
              ? missing(id)
              : r.deletedAt !== undefined
                ? { kind: 'not-found', message: `The record "${id}" is already in the trash.` }
                : applyDeleteRecord(r, stamp),
          'refuse',
        );
        return { id };
      }),
    undeleteRecord: (id) =>
      guard('restore the record', () =>
        change(id, (r, stamp) => (r === null ? missing(id) : applyUndeleteRecord(r, stamp)), 'refuse'),
      ),
    deleteRun: (id, runId) =>
      guard('delete the run', () =>
        change(id, (r, stamp) => (r === null ? missing(id) : applyDeleteRun(r, runId, stamp)), 'refuse'),
      ),
    restoreRun: (id, runId) =>
      guard('restore the run', () =>
        change(id, (r, stamp) => (r === null ? missing(id) : applyRestoreRun(r, runId, stamp)), 'refuse'),
      ),
    exportFile: async (file) => {
      const ext = `.${file.format}`;
      const base = file.suggestedName.replace(/[\\/]/g, '_');
      const name = base.toLowerCase().endsWith(ext) ? base : `${base}${ext}`;
      try {
        download(name, file.format === 'csv' ? 'text/csv;charset=utf-8' : 'application/json', file.content);
        return { ok: true, value: { kind: 'saved', fileName: name } };
      } catch (err) {
        return fail('io-error', `could not download ${name}: ${(err as Error).message}`);
      }
    },
    autosave: (state, seq) =>
      guard('autosave the run', async () => {
        const database = await db();
        const tx = database.transaction(META, 'readwrite');
        const prev = (await tx.store.get('autosave')) as string | undefined;
        let prevSeq: number | undefined;
        let prevAt = '';
        try {
          const p = JSON.parse(prev ?? 'null') as { seq?: unknown; savedAt?: unknown } | null;
          if (typeof p?.seq === 'number') prevSeq = p.seq;
          if (typeof p?.savedAt === 'string') prevAt = p.savedAt;
        } catch {
          // an unreadable autosave is replaced by a good one
        }
        if (seq !== undefined && prevSeq !== undefined && seq <= prevSeq) {
          await tx.done;
          return { savedAt: prevAt, stale: true };
        }
        const savedAt = now().toISOString();
        await tx.store.put(JSON.stringify({ savedAt, seq, state }), 'autosave');
        await tx.done;
        return { savedAt };
      }),
    loadAutosave: () =>
      guard('read the autosave', async () => {
        const database = await db();
        const text = (await database.get(META, 'autosave')) as string | undefined;
        if (text === undefined) return { kind: 'none' } as const;
        try {
          const v = JSON.parse(text) as { savedAt?: unknown; state?: unknown };
          if (typeof v.savedAt !== 'string' || v.state === undefined) return { kind: 'none' } as const;
          return { kind: 'found', savedAt: v.savedAt, state: v.state as JsonValue } as const;
        } catch {
          return { kind: 'none' } as const;
        }
      }),
    clearAutosave: () =>
      guard('clear the autosave', async () => {
        const database = await db();
        const tx = database.transaction(META, 'readwrite');
        const had = (await tx.store.get('autosave')) !== undefined;
        await tx.store.delete('autosave');
        await tx.done;
        return { cleared: had };
      }),
    saveDriftLog: async (log) => {
      const checked = DriftLogSchema.safeParse(log);
      if (!checked.success)
        return fail('invalid-payload', `The drift log is not valid: ${formatIssues(checked.error)}`);
      return guard('keep the drift log', () => putDrift(checked.data));
    },
    listDriftLogs: () =>
      guard('read the drift logs', async () =>
        (await readBook()).driftLogs
          .map(summarizeDriftLog)
          .sort((a, b) => (a.startedAt < b.startedAt ? 1 : a.startedAt > b.startedAt ? -1 : 0)),
      ),
    loadDriftLog: (id) =>
      guard('read the drift log', async () => {
        const log = (await readBook()).driftLogs.find((l) => l.id === id);
        if (!log) throw new BookError('not-found', `There is no drift log "${id}" in this browser.`);
        return log;
      }),
    backupBook: () =>
      guard('back up the unit book', async () => {
        const book = await readBook();
        const stamp = now().toISOString();
        const fileName = `spanmeter-unit-book-${stamp.slice(0, 10)}.json`;
        download(fileName, 'application/json', buildBackup(book, stamp));
        return {
          kind: 'saved' as const,
          fileName,
          records: book.records.length,
          driftLogs: book.driftLogs.length,
        };
      }),
    restoreBook: async (request) => {
      if (!request.file) return { ok: true, value: { kind: 'cancelled' } };
      const { name, text } = request.file;
      return guard('restore the backup', async () => {
        const r = await restore(text, request.policy);
        return r.kind === 'conflicts'
          ? {
              kind: 'conflicts' as const,
              fileName: name,
              token: 'browser',
              conflicts: r.conflicts,
              counts: r.counts,
            }
          : { kind: 'restored' as const, fileName: name, counts: r.counts };
      });
    },
  };
}
