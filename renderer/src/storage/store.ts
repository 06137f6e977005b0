/**
 * Where unit records, exports and the autosaved run go: one small interface, two implementations.
 * Inside the desktop app everything goes through `window.spanmeter` (the preload's IPC API); in a plain
 * browser (`npm run web`) records and the autosave live in `localStorage` and exports are downloads.
 * Every method resolves to an `IpcResult` and never rejects, as the desktop API does.
 */
import type {
  AutosaveResult,
  IpcResult,
  JsonValue,
  RecordSummary,
  SpanmeterApi,
  UnitRecord,
  UnitRecordDraft,
} from '../../../main/api-types.ts';
import { migrateRecordJson, UnitRecordDraftSchema, UnitRecordSchema } from '../../../main/ipc-contract.ts';

/** A file export: what to write and the name to offer. */
export interface ExportFile {
  readonly format: 'json' | 'csv';
  readonly suggestedName: string;
  readonly content: string;
}

/** The storage the renderer uses. */
export interface RecordStore {
  /** `desktop` (Electron, files in the app's data folder) or `browser` (this browser's local storage). */
  readonly kind: 'desktop' | 'browser';
  listRecords(): Promise<IpcResult<RecordSummary[]>>;
  loadRecord(id: string): Promise<IpcResult<UnitRecord>>;
  saveRecord(draft: UnitRecordDraft): Promise<IpcResult<UnitRecord>>;
  deleteRecord(id: string): Promise<IpcResult<{ id: string }>>;
  exportFile(
    file: ExportFile,
  ): Promise<IpcResult<{ kind: 'saved'; fileName: string } | { kind: 'cancelled' }>>;
  autosave(state: JsonValue): Promise<IpcResult<{ savedAt: string }>>;
  loadAutosave(): Promise<IpcResult<AutosaveResult>>;
  clearAutosave(): Promise<IpcResult<{ cleared: boolean }>>;
}

/** The desktop store: a thin pass-through to the preload's API. */
export function desktopStore(api: SpanmeterApi): RecordStore {
  return {
    kind: 'desktop',
    listRecords: async () => {
      const r = await api.listRecords();
      return r.ok ? { ok: true, value: r.value.records } : r;
    },
    loadRecord: (id) => api.loadRecord(id),
    saveRecord: (draft) => api.saveRecord(draft),
    deleteRecord: (id) => api.deleteRecord(id),
    exportFile: (file) => api.exportFile(file),
    autosave: (state) => api.autosaveRun(state),
    loadAutosave: () => api.loadAutosavedRun(),
    clearAutosave: () => api.clearAutosavedRun(),
  };
}

/** The part of the Web Storage API the browser store uses (`window.localStorage`, or a fake in tests). */
export interface KeyValueStorage {
  getItem(key: string): string | null;
  setItem(key: string, value: string): void;
  removeItem(key: string): void;
}

/** How the browser store hands a file to the user (a download in the page; a fake in tests). */
export type Downloader = (fileName: string, mime: string, content: string) => void;

/** localStorage keys. */
export const STORAGE_KEYS = {
  records: 'spanmeter.records.v1',
  autosave: 'spanmeter.autosave.v1',
} as const;

function fail<T>(code: 'not-found' | 'invalid-payload' | 'io-error', message: string): IpcResult<T> {
  return { ok: false, error: { code, message } };
}

function slug(name: string): string {
  const s = name
    .toLowerCase()
    .normalize('NFKD')
    .replace(/[^a-z0-9]+/g, '-')
    .replace(/^-+|-+$/g, '')
    .slice(0, 40);
  return s === '' ? 'unit' : s;
}

function randomSuffix(random: () => number): string {
  const alphabet = 'abcdefghijkmnpqrstuvwxyz23456789';
  let out = '';
  for (let i = 0; i < 8; i++) out += alphabet[Math.floor(random() * alphabet.length) % alphabet.length];
  return out;
}

/** Options of {@link browserStore} (injectable for tests). */
export interface BrowserStoreOptions {
  readonly storage: KeyValueStorage;
  readonly download: Downloader;
  readonly now?: () => Date;
  readonly random?: () => number;
}

/**
 * The browser store: records as one JSON map in `localStorage`, checked with the same schema the desktop
 * app's main process uses (`main/ipc-contract.ts`), ids built the same way (slug of the unit name and a
 * random suffix).
 */
export function browserStore(options: BrowserStoreOptions): RecordStore {
  const { storage, download } = options;
  const now = options.now ?? (() => new Date());
  const random = options.random ?? Math.random;

  const readAll = (): Record<string, UnitRecord> => {
    const text = storage.getItem(STORAGE_KEYS.records);
    if (text === null) return {};
    try {
      const parsed = JSON.parse(text) as unknown;
      if (typeof parsed !== 'object' || parsed === null || Array.isArray(parsed)) return {};
      const out: Record<string, UnitRecord> = {};
      for (const [id, value] of Object.entries(parsed as Record<string, unknown>)) {
        const r = UnitRecordSchema.safeParse(migrateRecordJson(value));
        if (r.success && r.data.id === id) out[id] = r.data;
      }
      return out;
    } catch {
      return {};
    }
  };
  const writeAll = (all: Record<string, UnitRecord>): IpcResult<null> => {
    try {
      storage.setItem(STORAGE_KEYS.records, JSON.stringify(all));
      return { ok: true, value: null };
    } catch (err) {
      return fail('io-error', `could not store the record in this browser: ${(err as Error).message}`);
    }
  };

  return {
    kind: 'browser',
    listRecords: async () => {
      const list: RecordSummary[] = Object.values(readAll()).map((r) => {
        const s: RecordSummary = {
          id: r.id,
          unitName: r.unitName,
          createdAt: r.createdAt,
          updatedAt: r.updatedAt,
          runCount: r.runs.length,
        };
        if (r.serial !== undefined) s.serial = r.serial;
        const last = r.runs.map((x) => x.takenAt).sort();
        if (last.length > 0) s.lastRunAt = last[last.length - 1];
        return s;
      });
      list.sort((a, b) => (a.updatedAt < b.updatedAt ? 1 : a.updatedAt > b.updatedAt ? -1 : 0));
      return { ok: true, value: list };
    },
    loadRecord: async (id) => {
      const r = readAll()[id];
      return r ? { ok: true, value: r } : fail('not-found', `no record "${id}" in this browser`);
    },
    saveRecord: async (draft) => {
      const checked = UnitRecordDraftSchema.safeParse(draft);
      if (!checked.success) {
        const first = checked.error.issues[0];
        return fail(
          'invalid-payload',
          `record: ${first ? `${first.path.join('.')}: ${first.message}` : 'invalid'}`,
        );
      }
      const all = readAll();
      const stamp = now().toISOString();
      const d = checked.data;
      let id = d.id;
      if (id === undefined) {
        do id = `${slug(d.unitName)}-${randomSuffix(random)}`;
        while (all[id] !== undefined);
      }
      const record = UnitRecordSchema.parse({
        ...d,
        id,
        createdAt: d.createdAt ?? all[id]?.createdAt ?? stamp,
        updatedAt: stamp,
      });
      all[id] = record;
      const w = writeAll(all);
      return w.ok ? { ok: true, value: record } : w;
    },
    deleteRecord: async (id) => {
      const all = readAll();
      if (all[id] === undefined) return fail('not-found', `no record "${id}" in this browser`);
      delete all[id];
      const w = writeAll(all);
      return w.ok ? { ok: true, value: { id } } : w;
    },
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
    autosave: async (state) => {
      const savedAt = now().toISOString();
      try {
        storage.setItem(STORAGE_KEYS.autosave, JSON.stringify({ savedAt, state }));
        return { ok: true, value: { savedAt } };
      } catch (err) {
        return fail('io-error', `could not autosave the run: ${(err as Error).message}`);
      }
    },
    loadAutosave: async () => {
      const text = storage.getItem(STORAGE_KEYS.autosave);
      if (text === null) return { ok: true, value: { kind: 'none' } };
      try {
        const v = JSON.parse(text) as { savedAt?: unknown; state?: unknown };
        if (typeof v.savedAt !== 'string' || v.state === undefined)
          return { ok: true, value: { kind: 'none' } };
        return { ok: true, value: { kind: 'found', savedAt: v.savedAt, state: v.state as JsonValue } };
      } catch {
        return { ok: true, value: { kind: 'none' } };
      }
    },
    clearAutosave: async () => {
      const had = storage.getItem(STORAGE_KEYS.autosave) !== null;
      storage.removeItem(STORAGE_KEYS.autosave);
      return { ok: true, value: { cleared: had } };
    },
  };
}

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

/** The store for this page: the desktop API when present, else the browser's local storage. */
export function pickStore(): RecordStore {
  if (typeof window !== 'undefined' && window.spanmeter) return desktopStore(window.spanmeter);
  return browserStore({ storage: window.localStorage, download: pageDownload });
}
