/**
 * Where unit records, exports and the autosaved run go: one small interface, two implementations.
 * Inside the desktop app everything goes through `window.spanmeter` (the preload's IPC API); in a plain
 * browser (`npm run web`) the book and the autosave live in IndexedDB (`idb-store.ts`; the old
 * localStorage book is migrated on first start) and exports and backups are downloads.
 * Every method resolves to an `IpcResult` and never rejects, as the desktop API does.
 */
import type {
  AutosaveResult,
  DriftLog,
  DriftLogSummary,
  IpcResult,
  JsonValue,
  RecordList,
  RecordSummary,
  RestoreOutcome,
  RestorePolicy,
  SpanmeterApi,
  UnitRecord,
  UnitRecordDraft,
} from '../../../main/api-types.ts';
import { browserStore } from './idb-store.ts';

/** A file export: what to write and the name to offer. */
export interface ExportFile {
  readonly format: 'json' | 'csv';
  readonly suggestedName: string;
  readonly content: string;
}

/** What the book's Back up action did. */
export type BackupOutcome =
  { kind: 'saved'; fileName: string; records: number; driftLogs: number } | { kind: 'cancelled' };

/**
 * A restore request. `policy`: `ask` stops at conflicts (nothing written) and returns them; `skip`
 * leaves conflicting records out; `copy` keeps them as separate records. In the desktop app the main
 * process asks for the file (and `token` names the file of a restore that stopped at conflicts); in a
 * browser the page reads the file and passes its text.
 */
export interface RestoreRequest {
  readonly policy: RestorePolicy;
  readonly token?: string;
  readonly file?: { readonly name: string; readonly text: string };
}

/** The storage the renderer uses. */
export interface RecordStore {
  /** `desktop` (Electron, files in the app's data folder) or `browser` (this browser's IndexedDB). */
  readonly kind: 'desktop' | 'browser';
  listRecords(): Promise<IpcResult<RecordSummary[]>>;
  /** The records, the deleted ones (restorable), and the entries that cannot be read (kept, listed). */
  listBook(): Promise<IpcResult<RecordList>>;
  loadRecord(id: string): Promise<IpcResult<UnitRecord>>;
  /** Saves a record; `draft.revision` is the revision it was based on (stale saves merge or are refused). */
  saveRecord(draft: UnitRecordDraft): Promise<IpcResult<UnitRecord>>;
  /** Moves a record to the trash. */
  deleteRecord(id: string): Promise<IpcResult<{ id: string }>>;
  undeleteRecord(id: string): Promise<IpcResult<UnitRecord>>;
  deleteRun(id: string, runId: string): Promise<IpcResult<UnitRecord>>;
  restoreRun(id: string, runId: string): Promise<IpcResult<UnitRecord>>;
  exportFile(
    file: ExportFile,
  ): Promise<IpcResult<{ kind: 'saved'; fileName: string } | { kind: 'cancelled' }>>;
  /** Keeps the run in progress; an older `seq` never replaces a newer one (`stale`). */
  autosave(state: JsonValue, seq?: number): Promise<IpcResult<{ savedAt: string; stale?: boolean }>>;
  loadAutosave(): Promise<IpcResult<AutosaveResult>>;
  clearAutosave(): Promise<IpcResult<{ cleared: boolean }>>;
  saveDriftLog(log: DriftLog): Promise<IpcResult<{ savedAt: string; stale: boolean }>>;
  listDriftLogs(): Promise<IpcResult<DriftLogSummary[]>>;
  loadDriftLog(id: string): Promise<IpcResult<DriftLog>>;
  /** Writes the whole unit book as one backup file. */
  backupBook(): Promise<IpcResult<BackupOutcome>>;
  /** Merges a backup into the book; never replaces a record without the policy saying so. */
  restoreBook(request: RestoreRequest): Promise<IpcResult<RestoreOutcome>>;
}

/** The desktop store: a thin pass-through to the preload's API. */
export function desktopStore(api: SpanmeterApi): RecordStore {
  return {
    kind: 'desktop',
    listRecords: async () => {
      const r = await api.listRecords();
      return r.ok ? { ok: true, value: r.value.records } : r;
    },
    listBook: () => api.listRecords(),
    loadRecord: (id) => api.loadRecord(id),
    saveRecord: (draft) => api.saveRecord(draft),
    deleteRecord: (id) => api.deleteRecord(id),
    undeleteRecord: (id) => api.undeleteRecord(id),
    deleteRun: (id, runId) => api.deleteRun(id, runId),
    restoreRun: (id, runId) => api.restoreRun(id, runId),
    exportFile: (file) => api.exportFile(file),
    autosave: (state, seq) => api.autosaveRun(state, seq),
    loadAutosave: () => api.loadAutosavedRun(),
    clearAutosave: () => api.clearAutosavedRun(),
    saveDriftLog: (log) => api.saveDriftLog(log),
    listDriftLogs: () => api.listDriftLogs(),
    loadDriftLog: (id) => api.loadDriftLog(id),
    backupBook: () => api.backupBook(),
    restoreBook: (r) =>
      api.restoreBook(r.token !== undefined ? { policy: r.policy, token: r.token } : { policy: r.policy }),
  };
}

/** The part of the Web Storage API the browser store reads the old book from (`window.localStorage`, or a fake). */
export interface KeyValueStorage {
  getItem(key: string): string | null;
  setItem(key: string, value: string): void;
  removeItem(key: string): void;
}

/** How the browser store hands a file to the user (a download in the page; a fake in tests). */
export type Downloader = (fileName: string, mime: string, content: string) => void;

/** localStorage keys of the book before it moved to IndexedDB (read once, to migrate). */
export const STORAGE_KEYS = {
  records: 'spanmeter.records.v1',
  autosave: 'spanmeter.autosave.v1',
} as const;

export { browserStore, type BrowserStoreOptions } from './idb-store.ts';

/** A download through a temporary link to a Blob URL. */
export const pageDownload: Downloader = (fileName, mime, content) => {
  const url = URL.createObjectURL(new Blob([content], { type: mime }));
  const a = document.createElement('a');
  a.href = url;
  a.download = fileName;
  document.body.appendChild(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 10_000);
};

/** The store for this page: the desktop API when present, else this browser's IndexedDB. */
export function pickStore(): RecordStore {
  if (typeof window !== 'undefined' && window.spanmeter) return desktopStore(window.spanmeter);
  let legacy: KeyValueStorage | null = null;
  try {
    legacy = window.localStorage;
  } catch {
    legacy = null;
  }
  return browserStore({ indexedDB: window.indexedDB, legacy, download: pageDownload });
}
