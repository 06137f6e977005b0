/**
 * Unit records on disk: one JSON file per unit, `<id>.json`, in a folder given as a parameter
 * (the app's `userData/records` in production, a temporary folder in tests), plus one autosave
 * file for the run in progress.
 *
 * Every write is atomic (`atomic-file.ts`). A file that cannot be read as a record is moved aside
 * to `<name>.corrupt-<timestamp>.json`, never deleted. A record written by another schema version
 * is reported and left untouched, and is never overwritten by a save.
 */
import { randomBytes as cryptoRandomBytes } from 'node:crypto';
import { mkdir, readFile, readdir, rename, stat, unlink } from 'node:fs/promises';
import path from 'node:path';
import { TEMP_PREFIX, atomicWriteFile } from './atomic-file.ts';
import {
  MAX_RECORD_FILE_BYTES,
  READABLE_RECORD_SCHEMA_VERSIONS,
  RECORD_SCHEMA_VERSION,
  migrateRecordJson,
  UnitRecordDraftSchema,
  UnitRecordSchema,
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
import { newRecordId, recordIdProblem } from './record-id.ts';

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

/** Outcome of reading a record file's text. */
export type ParsedRecord =
  | { kind: 'ok'; record: UnitRecord }
  | { kind: 'corrupt'; reason: string }
  | { kind: 'unsupported'; schemaVersion: unknown; reason: string };

/**
 * Parses the text of a record file. Pure.
 *
 * - Not JSON, not an object, no numeric `schemaVersion`, or a readable version that fails the schema:
 *   `corrupt`, with the reason.
 * - Version 1: moved to the current version (`migrateRecordJson`), then checked.
 * - Any other numeric `schemaVersion`: `unsupported` (written by another Spanmeter).
 *
 * @param text - the file's content.
 * @example parseRecordText('{"schemaVersion":3}').kind // → 'unsupported'
 */
export function parseRecordText(text: string): ParsedRecord {
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (err) {
    return { kind: 'corrupt', reason: `it is not valid JSON (${(err as Error).message})` };
  }
  if (typeof json !== 'object' || json === null || Array.isArray(json)) {
    return { kind: 'corrupt', reason: 'it does not hold a JSON object' };
  }
  const version = (json as { schemaVersion?: unknown }).schemaVersion;
  if (typeof version !== 'number') {
    return { kind: 'corrupt', reason: 'it has no numeric "schemaVersion", so it is not a Spanmeter record' };
  }
  if (!READABLE_RECORD_SCHEMA_VERSIONS.includes(version)) {
    const newer = version > RECORD_SCHEMA_VERSION;
    return {
      kind: 'unsupported',
      schemaVersion: version,
      reason:
        `it has schemaVersion ${version}; this version of Spanmeter reads schemaVersion ${RECORD_SCHEMA_VERSION}` +
        (newer ? ' (the file was written by a newer Spanmeter; update the app to open it)' : ''),
    };
  }
  const parsed = UnitRecordSchema.safeParse(migrateRecordJson(json));
  if (!parsed.success)
    return { kind: 'corrupt', reason: `it does not match the record schema: ${formatIssues(parsed.error)}` };
  return { kind: 'ok', record: parsed.data };
}

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
  /** The clock (default `() => new Date()`). */
  now?: () => Date;
  /** Randomness for new ids (default `crypto.randomBytes`). */
  randomBytes?: (n: number) => Uint8Array;
}

export interface RecordsStore {
  /** Summaries of all readable records (newest first) and one problem per file that is not. */
  list(): Promise<RecordList>;
  /** One record; throws StoreError `invalid-id`, `not-found`, `corrupt-record` or `unsupported-schema-version`. */
  load(id: string): Promise<UnitRecord>;
  /** Stores a record (a new id when it has none) and returns it as stored. */
  save(draft: UnitRecordDraft): Promise<UnitRecord>;
  /** Removes a record; throws StoreError `invalid-id` or `not-found`. */
  delete(id: string): Promise<{ id: string }>;
  /** Replaces the autosave with `state`. */
  saveAutosave(state: JsonValue): Promise<{ savedAt: string }>;
  /** The autosaved state, or `{ kind: 'none' }`. */
  loadAutosave(): Promise<AutosaveResult>;
  /** Removes the autosave; `cleared` is false when there was none. */
  clearAutosave(): Promise<{ cleared: boolean }>;
}

const AUTOSAVE_SCHEMA_VERSION = 1;

function isNotFound(err: unknown): boolean {
  return (err as { code?: string } | null)?.code === 'ENOENT';
}

/**
 * Opens the store on a folder. Nothing touches the disk until the first call.
 *
 * @example const store = createRecordsStore({ recordsDir: join(app.getPath('userData'), 'records'), autosaveFile: join(app.getPath('userData'), 'autosave-run.json') })
 */
export function createRecordsStore(options: RecordsStoreOptions): RecordsStore {
  const dir = path.resolve(options.recordsDir);
  const autosaveFile = path.resolve(options.autosaveFile);
  const now = options.now ?? (() => new Date());
  const random = options.randomBytes ?? ((n: number) => cryptoRandomBytes(n));

  const fileOf = (id: string) => path.join(dir, `${id}.json`);

  function checkId(id: unknown): string {
    const problem = recordIdProblem(id);
    if (problem !== null) throw new StoreError('invalid-id', problem);
    return id as string;
  }

  /** Renames `file` to `<base>.corrupt-<stamp>.json` beside it; returns the new path. */
  async function moveAside(file: string): Promise<string> {
    const base = path.basename(file, '.json');
    const stamp = asideStamp(now());
    for (let n = 0; n < 100; n++) {
      const aside = path.join(path.dirname(file), `${base}.corrupt-${stamp}${n === 0 ? '' : `-${n}`}.json`);
      try {
        await stat(aside);
        continue; // taken: never overwrite an earlier aside file
      } catch (err) {
        if (!isNotFound(err)) throw err;
      }
      await rename(file, aside);
      return aside;
    }
    throw new Error(`could not find a free name to move ${file} aside`);
  }

  /** Reads a file with the size limit; throws ENOENT errors through. */
  async function readLimited(file: string): Promise<string> {
    const info = await stat(file);
    if (info.size > MAX_RECORD_FILE_BYTES) {
      throw new StoreError(
        'file-too-large',
        `${file} is ${info.size} bytes; record files are at most ${MAX_RECORD_FILE_BYTES} bytes. It was left untouched.`,
        file,
      );
    }
    return readFile(file, 'utf8');
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

  function summarize(record: UnitRecord): RecordSummary {
    const lastRunAt = record.runs
      .map((r) => r.takenAt)
      .sort()
      .at(-1);
    return {
      id: record.id,
      unitName: record.unitName,
      ...(record.serial !== undefined ? { serial: record.serial } : {}),
      createdAt: record.createdAt,
      updatedAt: record.updatedAt,
      runCount: record.runs.length,
      ...(lastRunAt !== undefined ? { lastRunAt } : {}),
    };
  }

  return {
    async list() {
      let names: string[];
      try {
        names = await readdir(dir);
      } catch (err) {
        if (isNotFound(err)) return { records: [], problems: [] };
        throw err;
      }
      const records: RecordSummary[] = [];
      const problems: RecordProblem[] = [];
      for (const name of names.sort()) {
        if (name.startsWith('.') || name.startsWith(TEMP_PREFIX) || name.includes('.corrupt-')) continue;
        if (!name.endsWith('.json')) continue;
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
          records.push(summarize(await readRecordFile(path.join(dir, name), id)));
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
      records.sort((a, b) =>
        a.updatedAt < b.updatedAt ? 1 : a.updatedAt > b.updatedAt ? -1 : a.id.localeCompare(b.id),
      );
      return { records, problems };
    },

    async load(id) {
      const safe = checkId(id);
      const file = fileOf(safe);
      try {
        return await readRecordFile(file, safe);
      } catch (err) {
        if (isNotFound(err))
          throw new StoreError('not-found', `There is no record "${safe}" in ${dir}.`, file);
        throw err;
      }
    },

    async save(draft) {
      const parsed = UnitRecordDraftSchema.safeParse(draft);
      if (!parsed.success)
        throw new StoreError('invalid-payload', `The record is not valid: ${formatIssues(parsed.error)}`);
      const {
        id: givenId,
        createdAt: givenCreatedAt,
        updatedAt: _ignored,
        schemaVersion,
        ...fields
      } = parsed.data;
      await mkdir(dir, { recursive: true });

      let id = givenId;
      let existingCreatedAt: string | undefined;
      if (id === undefined) {
        for (let attempt = 0; ; attempt++) {
          const candidate = newRecordId(fields.unitName, random);
          const taken = await stat(fileOf(candidate)).then(
            () => true,
            (err: unknown) => (isNotFound(err) ? false : Promise.reject(err)),
          );
          if (!taken) {
            id = candidate;
            break;
          }
          if (attempt >= 10) throw new Error('could not find a free record id');
        }
      } else {
        const file = fileOf(id);
        let text: string | null = null;
        try {
          text = await readLimited(file);
        } catch (err) {
          if (!isNotFound(err)) throw err;
        }
        if (text !== null) {
          const existing = parseRecordText(text);
          if (existing.kind === 'unsupported') {
            throw new StoreError(
              'unsupported-schema-version',
              `Record file ${file} was not overwritten: ${existing.reason}.`,
              file,
            );
          }
          if (existing.kind === 'ok') existingCreatedAt = existing.record.createdAt;
        }
      }

      const record: UnitRecord = UnitRecordSchema.parse({
        schemaVersion,
        id,
        ...fields,
        createdAt: givenCreatedAt ?? existingCreatedAt ?? now().toISOString(),
        updatedAt: now().toISOString(),
      });
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
      await atomicWriteFile(fileOf(record.id), text);
      return record;
    },

    async delete(id) {
      const safe = checkId(id);
      try {
        await unlink(fileOf(safe));
      } catch (err) {
        if (isNotFound(err))
          throw new StoreError('not-found', `There is no record "${safe}" in ${dir}.`, fileOf(safe));
        throw err;
      }
      return { id: safe };
    },

    async saveAutosave(state) {
      const savedAt = now().toISOString();
      await mkdir(path.dirname(autosaveFile), { recursive: true });
      const text = JSON.stringify({ schemaVersion: AUTOSAVE_SCHEMA_VERSION, savedAt, state });
      if (text === undefined)
        throw new StoreError('invalid-payload', 'The autosave state cannot be written as JSON.');
      await atomicWriteFile(autosaveFile, `${text}\n`);
      return { savedAt };
    },

    async loadAutosave() {
      let text: string;
      try {
        text = await readFile(autosaveFile, 'utf8');
      } catch (err) {
        if (isNotFound(err)) return { kind: 'none' };
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
      return { kind: 'found', savedAt: obj.savedAt, state: obj.state as JsonValue };
    },

    async clearAutosave() {
      try {
        await unlink(autosaveFile);
        return { cleared: true };
      } catch (err) {
        if (isNotFound(err)) return { cleared: false };
        throw err;
      }
    },
  };
}
