/**
 * The rules of the unit book, shared by the desktop store (files, `records-store.ts`) and the browser
 * store (IndexedDB, `renderer/src/storage/`). Pure functions: no I/O, no clock of their own.
 *
 * A unit's record is calibration evidence, so:
 * - runs are only ever added; a run is never edited in place, and a deleted run goes to the record's
 *   trash, from where it can be restored;
 * - every change raises the record's `revision`, and every save says which revision it was based on.
 *   A save based on an older revision is merged when it only adds runs, and refused otherwise
 *   (`conflict`), so a second tab or window can never erase what the first one stored;
 * - a deleted record is kept (with `deletedAt`) and can be restored.
 *
 * The whole book travels as one backup file ({@link buildBackup}, {@link parseBackup}); restoring it
 * merges ({@link planRestore}) and never replaces a record without the caller's say-so.
 */
import {
  DRIFT_LOG_SCHEMA_VERSION,
  DriftLogSchema,
  READABLE_RECORD_SCHEMA_VERSIONS,
  RECORD_SCHEMA_VERSION,
  UnitRecordSchema,
  migrateRecordJson,
  type DriftLog,
  type DriftLogSummary,
  type RecordSummary,
  type Run,
  type TrashedRun,
  type UnitRecord,
  type UnitRecordDraft,
} from './ipc-contract.ts';
import { formatIssues } from './ipc.ts';

/** Outcome of reading a record file's text. */
export type ParsedRecord =
  | { kind: 'ok'; record: UnitRecord }
  | { kind: 'corrupt'; reason: string }
  | { kind: 'unsupported'; schemaVersion: unknown; reason: string };

/**
 * Parses the text of a record file. Pure.
 *
 * - Not JSON, not an object, no numeric `schemaVersion`, or version 1 that fails the schema:
 *   `corrupt`, with the reason.
 * - A numeric `schemaVersion` other than 1: `unsupported` (written by another Spanmeter).
 *
 * @param text - the file's content.
 * @example parseRecordText('{"schemaVersion":99}').kind // → 'unsupported'
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
  // An older readable version is moved to the current one first (ipc-contract's migrateRecordJson).
  const parsed = UnitRecordSchema.safeParse(migrateRecordJson(json));
  if (!parsed.success)
    return { kind: 'corrupt', reason: `it does not match the record schema: ${formatIssues(parsed.error)}` };
  return { kind: 'ok', record: parsed.data };
}

/** The descriptive fields of a record (everything but its runs and bookkeeping). */
export const META_KEYS = ['unitName', 'serial', 'notes', 'roomTempC', 'meterUsed', 'warmUpMinutes'] as const;

/** A record's revision; records stored before revisions existed count as revision 0. @example revisionOf({ revision: 3 } as UnitRecord) // → 3 */
export function revisionOf(record: Pick<UnitRecord, 'revision'>): number {
  return record.revision ?? 0;
}

/**
 * JSON with object keys sorted, so two equal values give the same text whatever their key order.
 * @example canonicalJson({ b: 1, a: [2, { d: 3, c: 4 }] }) // → '{"a":[2,{"c":4,"d":3}],"b":1}'
 */
export function canonicalJson(value: unknown): string {
  if (Array.isArray(value)) return `[${value.map(canonicalJson).join(',')}]`;
  if (value !== null && typeof value === 'object') {
    const entries = Object.entries(value as Record<string, unknown>)
      .filter(([, v]) => v !== undefined)
      .sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0));
    return `{${entries.map(([k, v]) => `${JSON.stringify(k)}:${canonicalJson(v)}`).join(',')}}`;
  }
  return JSON.stringify(value);
}

function sameRun(a: Run, b: Run): boolean {
  return canonicalJson(a) === canonicalJson(b);
}

function describeRun(run: Run): string {
  return `“${run.label}” of ${run.takenAt.slice(0, 16).replace('T', ' ')} (${run.id})`;
}

/** The names of the descriptive fields that differ between two records, in a fixed order. */
export function changedMeta(a: Partial<UnitRecord>, b: Partial<UnitRecord>): string[] {
  return META_KEYS.filter((k) => (a[k] ?? null) !== (b[k] ?? null));
}

/** What a store does with a change. */
export type BookChange =
  | { kind: 'write'; record: UnitRecord }
  | { kind: 'unchanged'; record: UnitRecord }
  | { kind: 'conflict'; message: string }
  | { kind: 'not-found'; message: string };

/**
 * Applies a save to the stored record (or to none). The draft must already have passed
 * `UnitRecordDraftSchema`; `id` is the id to store under (the draft's, or a new one).
 *
 * - No stored record: a new record, revision 1, with the draft's runs (duplicates by id dropped).
 * - Stored and deleted: `conflict` (restore it from the trash first).
 * - A run whose id is stored with other content: `conflict` (runs are never edited in place).
 * - Draft based on the stored revision: its descriptive fields are taken, its new runs appended; stored
 *   runs missing from the draft are kept (a save never removes a run; deleting is its own action).
 * - Draft based on an older revision (or none): merged when it only adds runs; `conflict` when it also
 *   changes a descriptive field, naming the fields.
 * - Runs in the record's trash are not brought back by a save.
 * - Nothing new: `unchanged`, and nothing needs writing.
 *
 * @param current - the stored record, or null when there is none under `id`.
 * @param draft - the parsed draft; `draft.revision` is the revision it was based on.
 * @param id - the record id to store under.
 * @param stamp - the time of saving, ISO 8601.
 * @example applySave(null, { schemaVersion: 1, unitName: 'OL-3', runs: [] }, 'ol-3-aaaaaaaa', '2031-04-01T10:00:00.000Z').kind // → 'write'
 */
export function applySave(
  current: UnitRecord | null,
  draft: UnitRecordDraft,
  id: string,
  stamp: string,
): BookChange {
  const meta = pickMeta(draft);
  if (current === null) {
    const seen = new Set<string>();
    const runs = draft.runs.filter((r) => !seen.has(r.id) && (seen.add(r.id), true));
    return {
      kind: 'write',
      record: UnitRecordSchema.parse({
        schemaVersion: RECORD_SCHEMA_VERSION,
        id,
        ...meta,
        runs,
        revision: 1,
        trash: [],
        createdAt: draft.createdAt ?? stamp,
        updatedAt: stamp,
      }),
    };
  }
  if (current.deletedAt !== undefined) {
    return {
      kind: 'conflict',
      message: `The record of ${current.unitName} (${id}) was deleted on ${current.deletedAt.slice(0, 16).replace('T', ' ')} UTC, so nothing was saved. Restore it from the trash, then save again.`,
    };
  }
  const stored = new Map(current.runs.map((r) => [r.id, r]));
  const trashed = new Set((current.trash ?? []).map((t) => t.run.id));
  const added: Run[] = [];
  const addedIds = new Set<string>();
  for (const run of draft.runs as Run[]) {
    const old = stored.get(run.id);
    if (old !== undefined) {
      if (!sameRun(old, run)) {
        return {
          kind: 'conflict',
          message: `Run ${describeRun(old)} of ${current.unitName} differs from the stored one; runs are never edited in place, so nothing was saved. Save the changed run as a new run.`,
        };
      }
    } else if (!trashed.has(run.id) && !addedIds.has(run.id)) {
      added.push(run);
      addedIds.add(run.id);
    }
  }
  const cur = revisionOf(current);
  const fresh = draft.revision !== undefined && draft.revision === cur;
  const changed = changedMeta(current, meta as Partial<UnitRecord>);
  if (!fresh && changed.length > 0) {
    const based = draft.revision === undefined ? 'an unknown revision' : `revision ${draft.revision}`;
    return {
      kind: 'conflict',
      message: `The record of ${current.unitName} was changed elsewhere (it is at revision ${cur}, this copy was based on ${based}) and this save also changes ${changed.join(', ')}, so nothing was saved. Open the record again, redo the change and save.`,
    };
  }
  if (added.length === 0 && changed.length === 0) return { kind: 'unchanged', record: current };
  const { serial: _s, notes: _n, roomTempC: _t, meterUsed: _m, warmUpMinutes: _w, ...rest } = current;
  return {
    kind: 'write',
    record: UnitRecordSchema.parse({
      ...rest,
      ...(fresh ? meta : pickMeta(current)),
      runs: [...current.runs, ...added],
      trash: current.trash ?? [],
      revision: cur + 1,
      updatedAt: stamp,
    }),
  };
}

function pickMeta(r: Partial<UnitRecordDraft>): Partial<UnitRecord> {
  const out: Record<string, unknown> = {};
  for (const k of META_KEYS) if (r[k] !== undefined) out[k] = r[k];
  return out as Partial<UnitRecord>;
}

/**
 * Moves one run to the record's trash.
 * @example applyDeleteRun(record, record.runs[0].id, '2031-04-01T10:00:00.000Z').kind // → 'write'
 */
export function applyDeleteRun(current: UnitRecord, runId: string, stamp: string): BookChange {
  const run = current.runs.find((r) => r.id === runId);
  if (run === undefined) {
    return {
      kind: 'not-found',
      message: `The record of ${current.unitName} has no run "${runId}"${(current.trash ?? []).some((t) => t.run.id === runId) ? ' (it is already in the trash)' : ''}.`,
    };
  }
  return {
    kind: 'write',
    record: UnitRecordSchema.parse({
      ...current,
      runs: current.runs.filter((r) => r.id !== runId),
      trash: [...(current.trash ?? []), { run, deletedAt: stamp }],
      revision: revisionOf(current) + 1,
      updatedAt: stamp,
    }),
  };
}

/**
 * Brings one run back from the record's trash (to the end of its runs).
 * @example applyRestoreRun(record, 'run-1', '2031-04-01T10:00:00.000Z').kind // → 'write' when run-1 is in the trash
 */
export function applyRestoreRun(current: UnitRecord, runId: string, stamp: string): BookChange {
  const entry = (current.trash ?? []).find((t) => t.run.id === runId);
  if (entry === undefined) {
    return { kind: 'not-found', message: `The trash of ${current.unitName} has no run "${runId}".` };
  }
  return {
    kind: 'write',
    record: UnitRecordSchema.parse({
      ...current,
      runs: [...current.runs, entry.run],
      trash: (current.trash ?? []).filter((t) => t.run.id !== runId),
      revision: revisionOf(current) + 1,
      updatedAt: stamp,
    }),
  };
}

/** Marks a record deleted (kept, restorable). @example applyDeleteRecord(record, '2031-04-01T10:00:00.000Z').kind // → 'write' */
export function applyDeleteRecord(current: UnitRecord, stamp: string): BookChange {
  if (current.deletedAt !== undefined) {
    return { kind: 'not-found', message: `The record "${current.id}" is already in the trash.` };
  }
  return {
    kind: 'write',
    record: UnitRecordSchema.parse({
      ...current,
      deletedAt: stamp,
      revision: revisionOf(current) + 1,
      updatedAt: stamp,
    }),
  };
}

/** Brings a deleted record back. @example applyUndeleteRecord(deleted, '2031-04-01T10:00:00.000Z').kind // → 'write' */
export function applyUndeleteRecord(current: UnitRecord, stamp: string): BookChange {
  if (current.deletedAt === undefined) {
    return { kind: 'not-found', message: `The record "${current.id}" is not in the trash.` };
  }
  const { deletedAt: _d, ...rest } = current;
  return {
    kind: 'write',
    record: UnitRecordSchema.parse({ ...rest, revision: revisionOf(current) + 1, updatedAt: stamp }),
  };
}

/** One line of the record list. @example summarizeRecord(record).runCount // → record.runs.length */
export function summarizeRecord(record: UnitRecord): RecordSummary {
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

/** Newest `updatedAt` first, then by id. */
export function compareSummaries(a: RecordSummary, b: RecordSummary): number {
  return a.updatedAt < b.updatedAt ? 1 : a.updatedAt > b.updatedAt ? -1 : a.id.localeCompare(b.id);
}

/** One line of the drift log list. @example summarizeDriftLog(log).pointCount // → log.points.length */
export function summarizeDriftLog(log: DriftLog): DriftLogSummary {
  return {
    id: log.id,
    startedAt: log.startedAt,
    savedAt: log.savedAt,
    volts: log.volts,
    pointCount: log.points.length,
    ...(log.unitName !== undefined ? { unitName: log.unitName } : {}),
  };
}

/** Whether an incoming copy of a drift log replaces the stored one: only a higher `seq` does. */
export function driftLogWins(stored: DriftLog | null, incoming: DriftLog): boolean {
  return stored === null || incoming.seq > stored.seq;
}

// ---------------------------------------------------------------------------------------------
// Backup

/** The `format` field of a unit book backup. */
export const BACKUP_FORMAT = 'spanmeter-unit-book';
/** The backup file layout this build writes and reads. */
export const BACKUP_VERSION = 1;

/** A stored entry that could not be read as a record: its file name and its exact bytes. */
export interface UnreadableEntry {
  /** The file name (desktop) or key (browser) it was stored under. */
  readonly file: string;
  /** Why it could not be read. */
  readonly reason: string;
  /** Its exact bytes, base64. */
  readonly base64: string;
}

/** The contents of a unit book backup. */
export interface BookContents {
  readonly records: readonly UnitRecord[];
  readonly unreadable: readonly UnreadableEntry[];
  readonly driftLogs: readonly DriftLog[];
}

/**
 * The backup file's text: one JSON document with the format name, its version, the schema versions of
 * what it holds, every record (deleted ones and their trash included), unreadable entries byte for
 * byte (base64), and every drift log.
 *
 * @example JSON.parse(buildBackup({ records: [], unreadable: [], driftLogs: [] }, '2031-04-01T10:00:00.000Z')).format // → 'spanmeter-unit-book'
 */
export function buildBackup(book: BookContents, createdAt: string): string {
  return `${JSON.stringify(
    {
      format: BACKUP_FORMAT,
      backupVersion: BACKUP_VERSION,
      createdAt,
      recordSchemaVersion: RECORD_SCHEMA_VERSION,
      driftLogSchemaVersion: DRIFT_LOG_SCHEMA_VERSION,
      records: book.records,
      unreadable: book.unreadable,
      driftLogs: book.driftLogs,
    },
    null,
    1,
  )}\n`;
}

/** A backup read back: what could be read, and what could not (kept byte for byte). */
export type ParsedBackup = { kind: 'ok'; book: BookContents } | { kind: 'invalid'; message: string };

function toBase64(text: string): string {
  const bytes = new TextEncoder().encode(text);
  let bin = '';
  for (let i = 0; i < bytes.length; i += 0x8000) bin += String.fromCharCode(...bytes.subarray(i, i + 0x8000));
  return btoa(bin);
}

/** Base64 of a string's UTF-8 bytes. @example textToBase64('Ω') // → 'zqk=' */
export function textToBase64(text: string): string {
  return toBase64(text);
}

/** The bytes of a base64 string. @example base64ToBytes('zqk=') // → Uint8Array [206, 169] */
export function base64ToBytes(base64: string): Uint8Array {
  const bin = atob(base64);
  const out = new Uint8Array(bin.length);
  for (let i = 0; i < bin.length; i++) out[i] = bin.charCodeAt(i);
  return out;
}

/**
 * Reads a backup file's text. Records that do not pass the schema (or are of another schema version) are
 * not dropped: they come back as unreadable entries, to be kept aside byte for byte.
 *
 * @example parseBackup('{}').kind // → 'invalid'
 */
export function parseBackup(text: string): ParsedBackup {
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (err) {
    return { kind: 'invalid', message: `it is not valid JSON (${(err as Error).message})` };
  }
  const doc = json as Record<string, unknown> | null;
  if (typeof doc !== 'object' || doc === null || doc.format !== BACKUP_FORMAT) {
    return {
      kind: 'invalid',
      message: `it is not a Spanmeter unit book backup (no "format": "${BACKUP_FORMAT}")`,
    };
  }
  if (typeof doc.backupVersion !== 'number' || doc.backupVersion > BACKUP_VERSION) {
    return {
      kind: 'invalid',
      message: `it is backup version ${String(doc.backupVersion)}; this Spanmeter reads version ${BACKUP_VERSION} (update the app to restore it)`,
    };
  }
  const records: UnitRecord[] = [];
  const unreadable: UnreadableEntry[] = [];
  const rawRecords = Array.isArray(doc.records) ? doc.records : [];
  rawRecords.forEach((raw: unknown, i) => {
    const parsed = UnitRecordSchema.safeParse(raw);
    if (parsed.success) records.push(parsed.data);
    else {
      const version = (raw as { schemaVersion?: unknown } | null)?.schemaVersion;
      const id = (raw as { id?: unknown } | null)?.id;
      unreadable.push({
        file: `${typeof id === 'string' && /^[a-z0-9-]{1,64}$/.test(id) ? id : `entry-${i}`}.json`,
        reason:
          typeof version === 'number' && version !== RECORD_SCHEMA_VERSION
            ? `it has schemaVersion ${version}; this Spanmeter reads ${RECORD_SCHEMA_VERSION}`
            : 'it does not match the record schema',
        base64: toBase64(JSON.stringify(raw) ?? 'null'),
      });
    }
  });
  for (const raw of Array.isArray(doc.unreadable) ? doc.unreadable : []) {
    const u = raw as Partial<UnreadableEntry> | null;
    if (u && typeof u.file === 'string' && typeof u.base64 === 'string') {
      unreadable.push({
        file: u.file,
        reason: typeof u.reason === 'string' ? u.reason : 'unreadable',
        base64: u.base64,
      });
    }
  }
  const driftLogs: DriftLog[] = [];
  for (const raw of Array.isArray(doc.driftLogs) ? doc.driftLogs : []) {
    const parsed = DriftLogSchema.safeParse(raw);
    if (parsed.success) driftLogs.push(parsed.data);
    else
      unreadable.push({
        file: 'drift-log.json',
        reason: 'a drift log that does not match its schema',
        base64: toBase64(JSON.stringify(raw) ?? 'null'),
      });
  }
  return { kind: 'ok', book: { records, unreadable, driftLogs } };
}

/** What restoring one record of a backup does. */
export type RestoreStep =
  | { kind: 'add'; record: UnitRecord }
  | { kind: 'merge'; record: UnitRecord }
  | { kind: 'unchanged' }
  | { kind: 'conflict'; reason: string };

/**
 * Decides what restoring one backed-up record does to the book's copy.
 *
 * - Not in the book: added as it is.
 * - In the book and unreadable there: a conflict (the unreadable file is never replaced).
 * - Same descriptive fields, and every run either the same as the book's or new: merged (the new runs
 *   and trashed runs are added; the book's own runs and deletions stay), or unchanged when nothing is new.
 * - Otherwise (a field differs, a run with the same id differs): a conflict, with the reason.
 *
 * @param existing - the book's record, `'unreadable'`, or null when there is none under that id.
 * @param incoming - the record from the backup.
 * @param stamp - the time of restoring.
 * @example planRestore(null, record, stamp).kind // → 'add'
 */
export function planRestore(
  existing: UnitRecord | 'unreadable' | null,
  incoming: UnitRecord,
  stamp: string,
): RestoreStep {
  if (existing === null) return { kind: 'add', record: incoming };
  if (existing === 'unreadable') {
    return {
      kind: 'conflict',
      reason: 'the book holds an unreadable file under this id, which is never replaced',
    };
  }
  const changed = changedMeta(existing, incoming);
  if (changed.length > 0)
    return { kind: 'conflict', reason: `the book’s copy differs in ${changed.join(', ')}` };
  const known = new Map<string, Run>();
  for (const r of existing.runs) known.set(r.id, r);
  for (const t of existing.trash ?? []) known.set(t.run.id, t.run);
  const newRuns: Run[] = [];
  const newTrash: TrashedRun[] = [];
  for (const run of incoming.runs) {
    const old = known.get(run.id);
    if (old === undefined) newRuns.push(run);
    else if (!sameRun(old, run))
      return { kind: 'conflict', reason: `run ${describeRun(run)} differs from the book’s` };
  }
  for (const t of incoming.trash ?? []) {
    const old = known.get(t.run.id);
    if (old === undefined) newTrash.push(t);
    else if (!sameRun(old, t.run))
      return { kind: 'conflict', reason: `run ${describeRun(t.run)} differs from the book’s` };
  }
  if (newRuns.length === 0 && newTrash.length === 0) return { kind: 'unchanged' };
  return {
    kind: 'merge',
    record: UnitRecordSchema.parse({
      ...existing,
      runs: [...existing.runs, ...newRuns],
      trash: [...(existing.trash ?? []), ...newTrash],
      revision: revisionOf(existing) + 1,
      updatedAt: stamp,
    }),
  };
}

/**
 * A conflicting backed-up record as a separate copy: a new id, its name marked as a restored copy, revision 1.
 * @example copyForRestore(record, 'kestrel-vco-aaaaaaaa', stamp).unitName // → 'Kestrel VCO (restored copy)'
 */
export function copyForRestore(incoming: UnitRecord, newId: string, stamp: string): UnitRecord {
  const suffix = ' (restored copy)';
  return UnitRecordSchema.parse({
    ...incoming,
    id: newId,
    unitName: `${incoming.unitName.slice(0, 120 - suffix.length)}${suffix}`,
    revision: 1,
    updatedAt: stamp,
  });
}
