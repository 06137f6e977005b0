/**
 * The API the preload exposes as `window.spanmeter`: one named function per IPC channel, and
 * nothing else. `ipcRenderer` itself never reaches the page (Electron security checklist item 20,
 * "Do not expose Electron APIs to untrusted web content",
 * https://www.electronjs.org/docs/latest/tutorial/security).
 *
 * Kept apart from `preload.ts` so it can be tested with a fake `invoke`. It imports only types,
 * so the preload bundle stays a few lines long.
 */
import type { Channel } from './channels.ts';
import type {
  DriftLog,
  ExportRequest,
  IpcResult,
  JsonValue,
  ResponseOf,
  RestorePolicy,
  UnitRecordDraft,
} from './ipc-contract.ts';

/** `ipcRenderer.invoke`, or a fake of it. */
export type InvokeFn = (channel: Channel, ...args: unknown[]) => Promise<unknown>;

/**
 * Builds the API on top of `invoke`. Every function resolves to an `IpcResult`: `{ ok: true, value }`
 * or `{ ok: false, error: { code, message } }`; none ever rejects.
 *
 * @example const api = buildSpanmeterApi((channel, ...args) => ipcRenderer.invoke(channel, ...args))
 */
export function buildSpanmeterApi(invoke: InvokeFn) {
  // A rejection can only come from this side of IPC (a value that cannot be cloned, a channel the
  // main process has not registered): it becomes a failure too, so no API function ever rejects.
  const call = async <C extends Channel>(
    channel: C,
    ...args: unknown[]
  ): Promise<IpcResult<ResponseOf<C>>> => {
    try {
      return (await invoke(channel, ...args)) as IpcResult<ResponseOf<C>>;
    } catch (err) {
      const message = (err instanceof Error ? err.message : String(err)).split('\n', 1)[0];
      const code = /could not be cloned/i.test(message) ? 'not-json' : 'internal-error';
      return { ok: false, error: { code, message: `${channel}: ${message}` } };
    }
  };
  return Object.freeze({
    /** `records:list`: summaries of the stored records, newest first, and files that could not be read. */
    listRecords: () => call('records:list'),
    /** `records:load`: one record by id. */
    loadRecord: (id: string) => call('records:load', { id }),
    /** `records:save`: store a record; without `id` it is new and gets one. Resolves to the stored record. */
    saveRecord: (record: UnitRecordDraft) => call('records:save', record),
    /** `records:delete`: remove a record by id. */
    deleteRecord: (id: string) => call('records:delete', { id }),
    /** `records:export`: ask where to save, then write `content` (JSON or CSV text). */
    exportFile: (request: ExportRequest) => call('records:export', request),
    /** `records:import`: ask for a record file and return it checked, not stored. */
    importRecord: () => call('records:import'),
    /** `records:delete-run`: move one run of a record to its trash. */
    deleteRun: (id: string, runId: string) => call('records:delete-run', { id, runId }),
    /** `records:restore-run`: bring one run back from its record's trash. */
    restoreRun: (id: string, runId: string) => call('records:restore-run', { id, runId }),
    /** `records:undelete`: bring a deleted record back from the trash. */
    undeleteRecord: (id: string) => call('records:undelete', { id }),
    /** `book:backup`: ask where to save, then write the whole unit book as one file. */
    backupBook: () => call('book:backup'),
    /** `book:restore`: ask for a backup and merge it; conflicts are resolved only as `policy` says. */
    restoreBook: (request: { policy: RestorePolicy; token?: string }) => call('book:restore', request),
    /** `drift:save`: keep a Hold & drift log (a lower `seq` never replaces a higher one). */
    saveDriftLog: (log: DriftLog) => call('drift:save', log),
    /** `drift:list`: the kept drift logs, newest first. */
    listDriftLogs: () => call('drift:list'),
    /** `drift:load`: one drift log by id. */
    loadDriftLog: (id: string) => call('drift:load', { id }),
    /** `run:autosave`: keep the run in progress on disk; an older `seq` never replaces a newer one. */
    autosaveRun: (state: JsonValue, seq?: number) =>
      call('run:autosave', seq === undefined ? { state } : { state, seq }),
    /** `run:load-autosave`: the autosaved run, or `{ kind: 'none' }`. */
    loadAutosavedRun: () => call('run:load-autosave'),
    /** `run:clear-autosave`: forget the autosaved run. */
    clearAutosavedRun: () => call('run:clear-autosave'),
  });
}

/** The exact shape of `window.spanmeter`. */
export type SpanmeterApi = ReturnType<typeof buildSpanmeterApi>;

/** The global name the API is exposed under. */
export const API_KEY = 'spanmeter';
