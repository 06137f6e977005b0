/**
 * Unit records on disk: one JSON file per unit, `<id>.json`, in a folder given as a parameter
 * (the app's `userData/records` in production, a temporary folder in tests), the Hold & drift logs in
 * its `drift-logs` subfolder, plus one autosave file for the run in progress.
 *
 * The rules of the book (`record-book.ts`): runs are only added, deleted runs and records go to a trash,
 * every save names the revision it was based on, and a stale save is merged or refused, never applied
 * over what another window stored. Changes to one record run one at a time (a queue per record).
 *
 * Every write is atomic (`atomic-file.ts`). A file that cannot be read as a record is moved aside
 * to `<name>.corrupt-<timestamp>.json`, never deleted, and is listed as a problem from then on. A
 * record written by another schema version is reported and left untouched, and is never overwritten
 * by a save. Temporary files left by an interrupted save are removed when the store starts.
 */
import { randomBytes as cryptoRandomBytes } from 'node:crypto';
import path from 'node:path';
import { TEMP_PREFIX, atomicWriteFile, nodeFs, tempFileOwner, type StoreFs } from './atomic-file.ts';
import {
  applyDeleteRecord,
  applyDeleteRun,
  applyRestoreRun,
  applySave,
  applyUndeleteRecord,
  base64ToBytes,
  buildBackup,
  compareSummaries,
  copyForRestore,
  driftLogWins,
  parseBackup,
  parseRecordText,
  planRestore,
  summarizeDriftLog,
  summarizeRecord,
  type BookChange,
  type UnreadableEntry,
} from './record-book.ts';
import {
  DriftLogSchema,
  type DriftLog,
  type DriftLogSummary,
  type RestoreConflict,
  type RestoreCounts,
  type RestorePolicy,
  MAX_RECORD_FILE_BYTES,
  UnitRecordDraftSchema,
  type AutosaveResult,
  type IpcErrorCode,
  type JsonValue,
  type RecordList,
  type RecordProblem,
  type RecordSummary,
  type UnitRecord,
  type UnitRecordDraft,
} from './ipc-contract.ts';
import { formatIssues } from './ipc.ts';
import { isValidRecordId, newRecordId, recordIdProblem } from './record-id.ts';

export type { JsonValue };

/** Codes a store operation fails with; a subset of the IPC error codes, passed through as they are. */
export type StoreErrorCode = Extract<
  IpcErrorCode,
  | 'invalid-id'
  | 'invalid-payload'
  | 'not-found'
  | 'corrupt-record'
  | 'unsupported-schema-version'
  | 'file-too-large'
  | 'conflict'
  | 'invalid-file'
>;

/** A store failure with a clear message (which file, what is wrong). */
export class StoreError extends Error {
  constructor(
    readonly code: StoreErrorCode,
    message: string,
    /** The file concerned, full path, when there is one. */
    readonly file?: string,
  ) {
    super(message);
    this.name = 'StoreError';
  }
}

export { parseRecordText, type ParsedRecord } from './record-book.ts';

/**
 * The timestamp in a moved-aside file's name: ISO 8601 basic format in UTC, with a decimal
 * fraction of the second (no `:`, which Windows forbids in file names).
 * @example asideStamp(new Date('2031-04-05T06:07:08.009Z')) // → '20310405T060708.009Z'
 */
export function asideStamp(date: Date): string {
  return date.toISOString().replace(/[-:]/g, '');
}

export interface RecordsStoreOptions {
  /** Folder of the record files; created on first write. */
  recordsDir: string;
  /** Full path of the autosave file (outside `recordsDir` is fine). */
  autosaveFile: string;
  /** Folder of the Hold & drift logs (default `<recordsDir>/drift-logs`). */
  driftDir?: string;
  /** The clock (default `() => new Date()`). */
  now?: () => Date;
  /** Randomness for new ids (default `crypto.randomBytes`). */
  randomBytes?: (n: number) => Uint8Array;
  /** The file system (default Node's); tests inject faults through it. */
  fs?: StoreFs;
}

/** What a restore did, or the conflicts that stopped it (`ask`: nothing was written). */
export type RestoreResult =
  | { kind: 'conflicts'; conflicts: RestoreConflict[]; counts: RestoreCounts }
  | { kind: 'restored'; counts: RestoreCounts };

export interface RecordsStore {
  /** Summaries of all readable records (newest first), the deleted ones, and one problem per file that is not readable. */
  list(): Promise<RecordList>;
  /** One record; throws StoreError `invalid-id`, `not-found`, `corrupt-record` or `unsupported-schema-version`. */
  load(id: string): Promise<UnitRecord>;
  /**
   * Stores a record (a new id when it has none) and returns it as stored. `draft.revision` is the
   * revision it was based on; a stale save is merged when it only adds runs, else StoreError `conflict`.
   */
  save(draft: UnitRecordDraft): Promise<UnitRecord>;
  /** Moves a record to the trash (kept, restorable); throws StoreError `invalid-id` or `not-found`. */
  delete(id: string): Promise<{ id: string }>;
  /** Brings a deleted record back. */
  undelete(id: string): Promise<UnitRecord>;
  /** Moves one run to its record's trash. */
  deleteRun(id: string, runId: string): Promise<UnitRecord>;
  /** Brings one run back from its record's trash. */
  restoreRun(id: string, runId: string): Promise<UnitRecord>;
  /** Replaces the autosave with `state`, unless a save with a higher `seq` got there first (`stale`). */
  saveAutosave(state: JsonValue, seq?: number): Promise<{ savedAt: string; stale?: boolean }>;
  /** The autosaved state, or `{ kind: 'none' }`. */
  loadAutosave(): Promise<AutosaveResult>;
  /** Removes the autosave; `cleared` is false when there was none. */
  clearAutosave(): Promise<{ cleared: boolean }>;
  /** Keeps a drift log, unless the stored copy has the same or a higher `seq` (`stale`). */
  saveDriftLog(log: DriftLog): Promise<{ savedAt: string; stale: boolean }>;
  /** The kept drift logs, newest first. */
  listDriftLogs(): Promise<DriftLogSummary[]>;
  /** One drift log; throws StoreError `invalid-id` or `not-found`. */
  loadDriftLog(id: string): Promise<DriftLog>;
  /** The whole book as one backup file's text, with counts. */
  backup(): Promise<{ text: string; records: number; driftLogs: number }>;
  /**
   * Merges a backup into the book. Records that differ from the book's are conflicts: with `ask`
   * nothing is written and they are returned; `skip` leaves them out; `copy` stores them under new ids.
   */
  restore(text: string, policy: RestorePolicy): Promise<RestoreResult>;
}

const AUTOSAVE_SCHEMA_VERSION = 1;

function isNotFound(err: unknown): boolean {
  return (err as { code?: string } | null)?.code === 'ENOENT';
}

/** True when a process with this id runs (or exists and is not ours to signal). */
function processAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (err) {
    return (err as { code?: string }).code === 'EPERM';
  }
}

/** The current content of a record file, classified. */
type Current =
  | { kind: 'none' }
  | { kind: 'ok'; record: UnitRecord }
  | { kind: 'corrupt'; reason: string }
  | { kind: 'unsupported'; reason: string }
  | { kind: 'too-large'; size: number };

/**
 * Opens the store on a folder. Nothing touches the disk until the first call, which first removes the
 * temporary files that interrupted saves left behind.
 *
 * @example const store = createRecordsStore({ recordsDir: join(app.getPath('userData'), 'records'), autosaveFile: join(app.getPath('userData'), 'autosave-run.json') })
 */
export function createRecordsStore(options: RecordsStoreOptions): RecordsStore {
  const dir = path.resolve(options.recordsDir);
  const driftDir = path.resolve(options.driftDir ?? path.join(dir, 'drift-logs'));
  const autosaveFile = path.resolve(options.autosaveFile);
  const now = options.now ?? (() => new Date());
  const random = options.randomBytes ?? ((n: number) => cryptoRandomBytes(n));
  const fs = options.fs ?? nodeFs;
  const decoder = new TextDecoder();

  let lastAutosave: { seq: number | undefined; savedAt: string } | null = null;

  const fileOf = (id: string) => path.join(dir, `${id}.json`);
  const driftFileOf = (id: string) => path.join(driftDir, `${id}.json`);

  // ---- One change at a time per key (a record id, a drift log, the autosave) ----
  const queues = new Map<string, Promise<unknown>>();
  function queued<T>(key: string, task: () => Promise<T>): Promise<T> {
    const before = queues.get(key) ?? Promise.resolve();
    const result = before.then(task, task);
    const tail = result.then(
      () => undefined,
      () => undefined,
    );
    queues.set(key, tail);
    void tail.then(() => {
      if (queues.get(key) === tail) queues.delete(key);
    });
    return result;
  }

  // ---- Start: remove temporary files of interrupted saves ----
  let started: Promise<void> | null = null;
  function ready(): Promise<void> {
    started ??= (async () => {
      for (const folder of new Set([dir, driftDir, path.dirname(autosaveFile)])) {
        let names: string[];
        try {
          names = await fs.readdir(folder);
        } catch {
          continue;
        }
        for (const name of names) {
          if (!name.startsWith(TEMP_PREFIX)) continue;
          const owner = tempFileOwner(name);
          if (owner !== null && owner !== process.pid && processAlive(owner)) continue; // another program's save in flight
          await fs.unlink(path.join(folder, name)).catch(() => undefined);
        }
      }
    })();
    return started;
  }

  function checkId(id: unknown): string {
    const problem = recordIdProblem(id);
    if (problem !== null) throw new StoreError('invalid-id', problem);
    return id as string;
  }

  async function exists(file: string): Promise<boolean> {
    try {
      await fs.stat(file);
      return true;
    } catch (err) {
      if (isNotFound(err)) return false;
      throw err;
    }
  }

  /** Renames `file` to `<base>.corrupt-<stamp>.json` beside it; returns the new path. */
  async function moveAside(file: string): Promise<string> {
    const base = path.basename(file, '.json');
    const stamp = asideStamp(now());
    for (let n = 0; n < 100; n++) {
      const aside = path.join(path.dirname(file), `${base}.corrupt-${stamp}${n === 0 ? '' : `-${n}`}.json`);
      if (await exists(aside)) continue; // taken: never overwrite an earlier aside file
      await fs.rename(file, aside);
      return aside;
    }
    throw new Error(`could not find a free name to move ${file} aside`);
  }

  /** Reads a file with the size limit; throws ENOENT errors through. */
  async function readLimited(file: string): Promise<string> {
    const info = await fs.stat(file);
    if (info.size > MAX_RECORD_FILE_BYTES) {
      throw new StoreError(
        'file-too-large',
        `${file} is ${info.size} bytes; record files are at most ${MAX_RECORD_FILE_BYTES} bytes. It was left untouched.`,
        file,
      );
    }
    return decoder.decode(await fs.readFile(file));
  }

  async function readCurrent(id: string): Promise<Current> {
    const file = fileOf(id);
    let info;
    try {
      info = await fs.stat(file);
    } catch (err) {
      if (isNotFound(err)) return { kind: 'none' };
      throw err;
    }
    if (info.size > MAX_RECORD_FILE_BYTES) return { kind: 'too-large', size: info.size };
    let text: string;
    try {
      text = decoder.decode(await fs.readFile(file));
    } catch (err) {
      if (isNotFound(err)) return { kind: 'none' };
      throw err;
    }
    const parsed = parseRecordText(text);
    if (parsed.kind === 'unsupported') return { kind: 'unsupported', reason: parsed.reason };
    if (parsed.kind === 'corrupt') return parsed;
    if (parsed.record.id !== id)
      return { kind: 'corrupt', reason: `its id "${parsed.record.id}" does not match its file name` };
    return parsed;
  }

  /** Reads and checks one record file; moves a corrupt one aside; throws StoreError. */
  async function readRecordFile(file: string, expectedId: string): Promise<UnitRecord> {
    const text = await readLimited(file);
    const parsed = parseRecordText(text);
    if (parsed.kind === 'unsupported') {
      throw new StoreError(
        'unsupported-schema-version',
        `Record file ${file} cannot be opened: ${parsed.reason}. It was left untouched.`,
        file,
      );
    }
    let reason = parsed.kind === 'corrupt' ? parsed.reason : null;
    if (parsed.kind === 'ok' && parsed.record.id !== expectedId) {
      reason = `its id "${parsed.record.id}" does not match its file name`;
    }
    if (reason !== null || parsed.kind !== 'ok') {
      const aside = await moveAside(file);
      throw new StoreError(
        'corrupt-record',
        `Record file ${file} is damaged: ${reason}. It was moved aside to ${aside}.`,
        file,
      );
    }
    return parsed.record;
  }

  function recordText(record: UnitRecord): string {
    // Indenting can take a record that fits the load limit as compact JSON (the IPC payload) past it,
    // and the file could then not be opened again: write it compact then, and refuse, before writing,
    // only a record that could never be read back.
    let text = `${JSON.stringify(record, null, 2)}\n`;
    if (Buffer.byteLength(text) > MAX_RECORD_FILE_BYTES) text = `${JSON.stringify(record)}\n`;
    const bytes = Buffer.byteLength(text);
    if (bytes > MAX_RECORD_FILE_BYTES) {
      throw new StoreError(
        'file-too-large',
        `The record is ${bytes} bytes as JSON; record files are at most ${MAX_RECORD_FILE_BYTES} bytes. Nothing was written.`,
        fileOf(record.id),
      );
    }
    return text;
  }

  async function commit(change: BookChange): Promise<UnitRecord> {
    switch (change.kind) {
      case 'write':
        await fs.mkdir(dir, { recursive: true });
        await atomicWriteFile(fileOf(change.record.id), recordText(change.record), fs);
        return change.record;
      case 'unchanged':
        return change.record;
      case 'conflict':
        throw new StoreError('conflict', change.message);
      case 'not-found':
        throw new StoreError('not-found', change.message);
    }
  }

  /** Loads a record for a change, refusing anything unreadable (which is never overwritten). */
  async function currentForChange(id: string): Promise<UnitRecord> {
    const file = fileOf(id);
    const cur = await readCurrent(id);
    switch (cur.kind) {
      case 'none':
        throw new StoreError('not-found', `There is no record "${id}" in ${dir}.`, file);
      case 'unsupported':
        throw new StoreError(
          'unsupported-schema-version',
          `Record file ${file} was not changed: ${cur.reason}.`,
          file,
        );
      case 'too-large':
        throw new StoreError(
          'file-too-large',
          `Record file ${file} is ${cur.size} bytes, over the limit; it was not changed.`,
          file,
        );
      case 'corrupt': {
        const aside = await moveAside(file);
        throw new StoreError(
          'corrupt-record',
          `Record file ${file} is damaged: ${cur.reason}. It was moved aside to ${aside}.`,
          file,
        );
      }
      case 'ok':
        return cur.record;
    }
  }

  async function freeId(unitName: string): Promise<string> {
    for (let attempt = 0; attempt <= 10; attempt++) {
      const candidate = newRecordId(unitName, random);
      if (!(await exists(fileOf(candidate)))) return candidate;
    }
    throw new Error('could not find a free record id');
  }

  function changeRecord(
    id: string,
    apply: (r: UnitRecord, stamp: string) => BookChange,
  ): Promise<UnitRecord> {
    const safe = checkId(id);
    return queued(safe, async () => {
      await ready();
      return commit(apply(await currentForChange(safe), now().toISOString()));
    });
  }

  async function readDriftFile(id: string): Promise<DriftLog | null> {
    const file = driftFileOf(id);
    let text: string;
    try {
      text = await readLimited(file);
    } catch (err) {
      if (isNotFound(err)) return null;
      throw err;
    }
    let json: unknown;
    try {
      json = JSON.parse(text);
    } catch {
      json = undefined;
    }
    const parsed = DriftLogSchema.safeParse(json);
    if (parsed.success && parsed.data.id === id) return parsed.data;
    const version = (json as { schemaVersion?: unknown } | null)?.schemaVersion;
    if (typeof version === 'number' && version > 1) {
      throw new StoreError(
        'unsupported-schema-version',
        `Drift log ${file} has schemaVersion ${version}, written by a newer Spanmeter. It was left untouched.`,
        file,
      );
    }
    const aside = await moveAside(file);
    throw new StoreError(
      'corrupt-record',
      `Drift log ${file} is damaged. It was moved aside to ${aside}.`,
      file,
    );
  }

  async function listNames(folder: string): Promise<string[]> {
    try {
      return (await fs.readdir(folder)).sort();
    } catch (err) {
      if (isNotFound(err)) return [];
      throw err;
    }
  }

  const asideProblem = (name: string): RecordProblem => ({
    file: name,
    code: 'corrupt-record',
    message: `${name} is a damaged record kept aside byte for byte; Spanmeter never overwrites or deletes it. Open it in a text editor to recover what it holds.`,
  });

  async function saveDrift(log: DriftLog): Promise<{ savedAt: string; stale: boolean }> {
    return queued(`drift:${log.id}`, async () => {
      await ready();
      let stored: DriftLog | null = null;
      try {
        stored = await readDriftFile(log.id);
      } catch (err) {
        if (!(err instanceof StoreError) || err.code !== 'corrupt-record') throw err; // unsupported: never overwritten
      }
      if (!driftLogWins(stored, log)) return { savedAt: stored?.savedAt ?? log.savedAt, stale: true };
      await fs.mkdir(driftDir, { recursive: true });
      await atomicWriteFile(driftFileOf(log.id), `${JSON.stringify(log)}\n`, fs);
      return { savedAt: log.savedAt, stale: false };
    });
  }

  /** Writes an unreadable backup entry aside, unless a file with the same bytes is already kept. */
  async function keepAside(entry: UnreadableEntry, known: Set<string>): Promise<boolean> {
    if (known.has(entry.base64)) return false;
    const base =
      path
        .basename(entry.file)
        .replace(/\.json$/, '')
        .replace(/\.corrupt-.*$/, '')
        .replace(/[^a-z0-9-]/g, '-')
        .slice(0, 64) || 'restored';
    await fs.mkdir(dir, { recursive: true });
    const stamp = asideStamp(now());
    for (let n = 0; n < 100; n++) {
      const aside = path.join(dir, `${base}.corrupt-${stamp}${n === 0 ? '' : `-${n}`}.json`);
      if (await exists(aside)) continue;
      await atomicWriteFile(aside, base64ToBytes(entry.base64), fs);
      known.add(entry.base64);
      return true;
    }
    throw new Error(`could not find a free name to keep ${entry.file} aside`);
  }

  async function readBook(): Promise<{
    records: UnitRecord[];
    unreadable: UnreadableEntry[];
    driftLogs: DriftLog[];
  }> {
    const records: UnitRecord[] = [];
    const unreadable: UnreadableEntry[] = [];
    const driftLogs: DriftLog[] = [];
    const b64 = (bytes: Uint8Array) =>
      Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength).toString('base64');
    for (const name of await listNames(dir)) {
      if (name.startsWith('.') || !name.endsWith('.json')) continue;
      const file = path.join(dir, name);
      let bytes: Uint8Array;
      try {
        bytes = await fs.readFile(file);
      } catch (err) {
        if (isNotFound(err)) continue;
        throw err;
      }
      if (name.includes('.corrupt-')) {
        unreadable.push({ file: name, reason: 'a damaged record kept aside', base64: b64(bytes) });
        continue;
      }
      const parsed = parseRecordText(decoder.decode(bytes));
      const id = name.slice(0, -'.json'.length);
      if (parsed.kind === 'ok' && parsed.record.id === id) records.push(parsed.record);
      else
        unreadable.push({
          file: name,
          reason: parsed.kind === 'ok' ? 'its id does not match its file name' : parsed.reason,
          base64: b64(bytes),
        });
    }
    for (const name of await listNames(driftDir)) {
      if (name.startsWith('.') || !name.endsWith('.json')) continue;
      const bytes = await fs.readFile(path.join(driftDir, name)).catch(() => null);
      if (bytes === null) continue;
      let json: unknown;
      try {
        json = JSON.parse(decoder.decode(bytes));
      } catch {
        json = undefined;
      }
      const parsed = DriftLogSchema.safeParse(json);
      if (parsed.success && !name.includes('.corrupt-')) driftLogs.push(parsed.data);
      else unreadable.push({ file: `drift-${name}`, reason: 'an unreadable drift log', base64: b64(bytes) });
    }
    return { records, unreadable, driftLogs };
  }

  return {
    async list() {
      await ready();
      const names = await listNames(dir);
      const records: RecordSummary[] = [];
      const trashed: (RecordSummary & { deletedAt: string })[] = [];
      const problems: RecordProblem[] = [];
      for (const name of names) {
        if (name.startsWith('.') || name.startsWith(TEMP_PREFIX)) continue;
        if (!name.endsWith('.json')) continue;
        if (name.includes('.corrupt-')) {
          problems.push(asideProblem(name));
          continue;
        }
        const id = name.slice(0, -'.json'.length);
        const idProblem = recordIdProblem(id);
        if (idProblem !== null) {
          problems.push({
            file: name,
            code: 'invalid-id',
            message: `${name} was skipped: its name is not a record id (${idProblem}).`,
          });
          continue;
        }
        try {
          const record = await queued(id, () => readRecordFile(path.join(dir, name), id));
          if (record.deletedAt !== undefined)
            trashed.push({ ...summarizeRecord(record), deletedAt: record.deletedAt });
          else records.push(summarizeRecord(record));
        } catch (err) {
          if (err instanceof StoreError) problems.push({ file: name, code: err.code, message: err.message });
          else if (isNotFound(err))
            continue; // deleted while listing
          else
            problems.push({
              file: name,
              code: 'io-error',
              message: `${name} could not be read: ${(err as Error).message}`,
            });
        }
      }
      records.sort(compareSummaries);
      trashed.sort((a, b) => (a.deletedAt < b.deletedAt ? 1 : a.deletedAt > b.deletedAt ? -1 : 0));
      return trashed.length > 0 ? { records, problems, trashed } : { records, problems };
    },

    async load(id) {
      const safe = checkId(id);
      await ready();
      const file = fileOf(safe);
      let record: UnitRecord;
      try {
        record = await queued(safe, () => readRecordFile(file, safe));
      } catch (err) {
        if (isNotFound(err))
          throw new StoreError('not-found', `There is no record "${safe}" in ${dir}.`, file);
        throw err;
      }
      if (record.deletedAt !== undefined) {
        throw new StoreError(
          'not-found',
          `There is no record "${safe}" in ${dir} (it is in the trash; restore it from there).`,
          file,
        );
      }
      return record;
    },

    async save(draft) {
      const parsed = UnitRecordDraftSchema.safeParse(draft);
      if (!parsed.success)
        throw new StoreError('invalid-payload', `The record is not valid: ${formatIssues(parsed.error)}`);
      const d = parsed.data;
      await ready();
      await fs.mkdir(dir, { recursive: true });
      if (d.id === undefined) {
        const id = await freeId(d.unitName);
        return queued(id, async () => commit(applySave(null, d, id, now().toISOString())));
      }
      const id = d.id;
      return queued(id, async () => {
        const file = fileOf(id);
        const cur = await readCurrent(id);
        if (cur.kind === 'unsupported')
          throw new StoreError(
            'unsupported-schema-version',
            `Record file ${file} was not overwritten: ${cur.reason}.`,
            file,
          );
        if (cur.kind === 'too-large')
          throw new StoreError(
            'file-too-large',
            `Record file ${file} is ${cur.size} bytes, over the limit; it was not overwritten.`,
            file,
          );
        // A damaged file is moved aside (kept byte for byte, listed as a problem) before the new one is written.
        if (cur.kind === 'corrupt') await moveAside(file);
        return commit(applySave(cur.kind === 'ok' ? cur.record : null, d, id, now().toISOString()));
      });
    },

    async delete(id) {
      const safe = checkId(id);
      await changeRecord(safe, (r, stamp) =>
        r.deletedAt !== undefined
          ? {
              kind: 'not-found',
              message: `There is no record "${safe}" in ${dir} (it is already in the trash).`,
            }
          : applyDeleteRecord(r, stamp),
      );
      return { id: safe };
    },

    undelete: (id) => changeRecord(id, applyUndeleteRecord),
    deleteRun: (id, runId) => changeRecord(id, (r, stamp) => applyDeleteRun(r, runId, stamp)),
    restoreRun: (id, runId) => changeRecord(id, (r, stamp) => applyRestoreRun(r, runId, stamp)),

    saveAutosave(state, seq) {
      return queued('\0autosave', async () => {
        await ready();
        if (
          seq !== undefined &&
          lastAutosave !== null &&
          lastAutosave.seq !== undefined &&
          seq <= lastAutosave.seq
        ) {
          return { savedAt: lastAutosave.savedAt, stale: true };
        }
        const savedAt = now().toISOString();
        await fs.mkdir(path.dirname(autosaveFile), { recursive: true });
        const text = JSON.stringify({ schemaVersion: AUTOSAVE_SCHEMA_VERSION, savedAt, state });
        if (text === undefined)
          throw new StoreError('invalid-payload', 'The autosave state cannot be written as JSON.');
        await atomicWriteFile(autosaveFile, `${text}\n`, fs);
        lastAutosave = { seq, savedAt };
        return { savedAt };
      });
    },

    loadAutosave() {
      return queued('\0autosave', async () => {
        await ready();
        let text: string;
        try {
          text = decoder.decode(await fs.readFile(autosaveFile));
        } catch (err) {
          if (isNotFound(err)) return { kind: 'none' } as const;
          throw err;
        }
        let json: unknown;
        try {
          json = JSON.parse(text);
        } catch (err) {
          const aside = await moveAside(autosaveFile);
          throw new StoreError(
            'corrupt-record',
            `The autosave ${autosaveFile} is not valid JSON (${(err as Error).message}). It was moved aside to ${aside}.`,
            autosaveFile,
          );
        }
        const obj = json as { schemaVersion?: unknown; savedAt?: unknown; state?: unknown } | null;
        if (
          obj &&
          typeof obj === 'object' &&
          typeof obj.schemaVersion === 'number' &&
          obj.schemaVersion !== AUTOSAVE_SCHEMA_VERSION
        ) {
          throw new StoreError(
            'unsupported-schema-version',
            `The autosave ${autosaveFile} has schemaVersion ${obj.schemaVersion}; this version reads ${AUTOSAVE_SCHEMA_VERSION}. It was left untouched.`,
            autosaveFile,
          );
        }
        if (
          !obj ||
          typeof obj !== 'object' ||
          obj.schemaVersion !== AUTOSAVE_SCHEMA_VERSION ||
          typeof obj.savedAt !== 'string' ||
          !('state' in obj)
        ) {
          const aside = await moveAside(autosaveFile);
          throw new StoreError(
            'corrupt-record',
            `The autosave ${autosaveFile} is not an autosave file (it needs schemaVersion, savedAt and state). It was moved aside to ${aside}.`,
            autosaveFile,
          );
        }
        return { kind: 'found', savedAt: obj.savedAt, state: obj.state as JsonValue } as const;
      });
    },

    clearAutosave() {
      return queued('\0autosave', async () => {
        await ready();
        try {
          await fs.unlink(autosaveFile);
          return { cleared: true };
        } catch (err) {
          if (isNotFound(err)) return { cleared: false };
          throw err;
        }
      });
    },

    async saveDriftLog(log) {
      const parsed = DriftLogSchema.safeParse(log);
      if (!parsed.success)
        throw new StoreError('invalid-payload', `The drift log is not valid: ${formatIssues(parsed.error)}`);
      return saveDrift(parsed.data);
    },

    async listDriftLogs() {
      await ready();
      const out: DriftLogSummary[] = [];
      for (const name of await listNames(driftDir)) {
        if (name.startsWith('.') || !name.endsWith('.json') || name.includes('.corrupt-')) continue;
        const id = name.slice(0, -'.json'.length);
        if (!isValidRecordId(id)) continue;
        try {
          const log = await readDriftFile(id);
          if (log) out.push(summarizeDriftLog(log));
        } catch {
          // listed as nothing: a damaged log was moved aside, a newer one left untouched
        }
      }
      return out.sort((a, b) => (a.startedAt < b.startedAt ? 1 : a.startedAt > b.startedAt ? -1 : 0));
    },

    async loadDriftLog(id) {
      const safe = checkId(id);
      await ready();
      const log = await readDriftFile(safe);
      if (log === null) throw new StoreError('not-found', `There is no drift log "${safe}" in ${driftDir}.`);
      return log;
    },

    async backup() {
      await ready();
      const book = await readBook();
      return {
        text: buildBackup(book, now().toISOString()),
        records: book.records.length,
        driftLogs: book.driftLogs.length,
      };
    },

    async restore(text, policy) {
      await ready();
      const parsed = parseBackup(text);
      if (parsed.kind === 'invalid')
        throw new StoreError('invalid-file', `The backup cannot be restored: ${parsed.message}.`);
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
      const existingOf = async (id: string): Promise<UnitRecord | 'unreadable' | null> => {
        const cur = await readCurrent(id);
        return cur.kind === 'none' ? null : cur.kind === 'ok' ? cur.record : 'unreadable';
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
        if (conflicts.length > 0) return { kind: 'conflicts', conflicts, counts: dry };
      }
      await fs.mkdir(dir, { recursive: true });
      for (const incoming of book.records) {
        await queued(incoming.id, async () => {
          const stamp = now().toISOString();
          const step = planRestore(await existingOf(incoming.id), incoming, stamp);
          if (step.kind === 'add' || step.kind === 'merge') {
            await commit({ kind: 'write', record: step.record });
            counts[step.kind === 'add' ? 'added' : 'merged']++;
          } else if (step.kind === 'unchanged') counts.unchanged++;
          else if (policy === 'copy') {
            const id = await freeId(incoming.unitName);
            await commit({ kind: 'write', record: copyForRestore(incoming, id, stamp) });
            counts.copied++;
          } else counts.skipped++;
        });
      }
      for (const log of book.driftLogs) if (!(await saveDrift(log)).stale) counts.driftLogs++;
      if (book.unreadable.length > 0) {
        const known = new Set((await readBook()).unreadable.map((u) => u.base64));
        for (const entry of book.unreadable) if (await keepAside(entry, known)) counts.keptAside++;
      }
      return { kind: 'restored', counts };
    },
  };
}
