/**
 * The one IPC contract between the renderer and the main process: every channel, with the zod
 * schema of its request and of its response, and the size limit on each.
 *
 * The main side parses every request and every response against these schemas (`ipc.ts`); the
 * preload exposes one function per channel (`preload-api.ts`); the renderer imports the types only.
 * Electron security checklist, item 17 "Validate the sender of all IPC messages", and item 20
 * "Do not expose Electron APIs to untrusted web content"
 * (https://www.electronjs.org/docs/latest/tutorial/security).
 */
import { z } from 'zod';
import { CHANNELS, type Channel } from './channels.ts';
import { MAX_CONTROL_VOLTS } from '../dsp/calibration/index.ts';
import { CalibrationResultSchema, isRunResult, migrateResult } from '../dsp/calibration/index.ts';
import { recordIdProblem } from './record-id.ts';

export { CHANNELS, type Channel };

/** One mebibyte, 1 048 576 bytes. */
export const MiB = 1024 * 1024;

/** Default limit on a request or response, measured as UTF-8 bytes of its JSON text: 1 MiB. */
export const MAX_PAYLOAD_BYTES = 1 * MiB;

/** Largest record file `records:import` reads: the same 1 MiB as any payload. */
export const MAX_RECORD_FILE_BYTES = MAX_PAYLOAD_BYTES;

/**
 * The record schema version this build writes. Version 1 (whose runs held the result shape of schema 1)
 * is read and moved to this one by {@link migrateRecordJson}; nothing in it is lost.
 */
export const RECORD_SCHEMA_VERSION = 2;

/** Record schema versions this build reads: the current one and those {@link migrateRecordJson} moves up. */
export const READABLE_RECORD_SCHEMA_VERSIONS: readonly number[] = [1, RECORD_SCHEMA_VERSION];

/**
 * A record as read from a file or from browser storage, moved to the current schema: a version 1 record
 * gets `schemaVersion: 2` and each run's result goes through `migrateResult` (`dsp/calibration/result.ts`). Anything
 * that is not a version 1 record comes back untouched, for the schema to judge.
 *
 * @param value - Parsed JSON.
 * @example migrateRecordJson({ schemaVersion: 1, runs: [] }) // { schemaVersion: 2, runs: [] }
 */
export function migrateRecordJson(value: unknown): unknown {
  if (typeof value !== 'object' || value === null || Array.isArray(value)) return value;
  const v = value as { schemaVersion?: unknown; runs?: unknown };
  if (v.schemaVersion !== 1) return value;
  const runs = Array.isArray(v.runs)
    ? v.runs.map((run: unknown) => {
        if (typeof run !== 'object' || run === null || !('result' in run)) return run;
        const m = migrateResult((run as { result: unknown }).result);
        return m.kind === 'ok' ? { ...run, result: m.result } : run;
      })
    : v.runs;
  return { ...v, schemaVersion: RECORD_SCHEMA_VERSION, runs };
}

// ---------------------------------------------------------------------------------------------
// Errors and results

/**
 * Why a call failed. Returned, never thrown, across IPC:
 * - `untrusted-sender`: the calling frame is not the app's own page (checklist item 17).
 * - `payload-too-large`: the request or response is over its size limit.
 * - `not-json`: the request holds something JSON cannot carry (function, undefined, circular…).
 * - `invalid-payload`: the request does not match the channel's schema.
 * - `invalid-response`: the main process produced a response that does not match (a bug).
 * - `invalid-id`: a record id that could not be a safe file name.
 * - `not-found`: no record (or file) by that name.
 * - `corrupt-record`: a stored record could not be read; it was moved aside.
 * - `unsupported-schema-version`: the record was written by another version of Spanmeter.
 * - `invalid-file`: a file chosen in a dialog is not what the channel expects.
 * - `file-too-large`: a file chosen in a dialog is over the channel's limit.
 * - `io-error`: the file system refused (permissions, disk full…).
 * - `internal-error`: anything else.
 * - `conflict`: a save was based on an older revision of the record and does more than add runs
 *   (or the record was deleted meanwhile); nothing was written.
 */
export const ERROR_CODES = [
  'untrusted-sender',
  'payload-too-large',
  'not-json',
  'invalid-payload',
  'invalid-response',
  'invalid-id',
  'not-found',
  'corrupt-record',
  'unsupported-schema-version',
  'invalid-file',
  'file-too-large',
  'io-error',
  'internal-error',
  'conflict',
] as const;

/** One of {@link ERROR_CODES}. */
export type IpcErrorCode = (typeof ERROR_CODES)[number];

/** A failure as the renderer receives it: a code to branch on and a sentence to show. */
export interface IpcFailure {
  code: IpcErrorCode;
  message: string;
}

/** What every API function resolves to. Never rejects for expected failures. */
export type IpcResult<T> = { ok: true; value: T } | { ok: false; error: IpcFailure };

/** True when `value` is one of {@link ERROR_CODES}. @example isIpcErrorCode('not-found') // → true */
export function isIpcErrorCode(value: unknown): value is IpcErrorCode {
  return typeof value === 'string' && (ERROR_CODES as readonly string[]).includes(value);
}

// ---------------------------------------------------------------------------------------------
// Building blocks

const finite = () => z.number().finite();
const isoTime = () => z.iso.datetime({ offset: true });

/** A record id, checked by `recordIdProblem` (no traversal, separators or reserved names). */
export const RecordIdSchema = z.string().superRefine((id, ctx) => {
  const problem = recordIdProblem(id);
  if (problem !== null) ctx.addIssue({ code: 'custom', message: problem });
});

/** A run id inside a record (a UUID from `crypto.randomUUID()` fits): 1–64 of a-z, 0-9, `-`. */
export const RunIdSchema = z
  .string()
  .regex(/^[a-z0-9][a-z0-9-]{0,63}$/, 'run id may only contain a-z, 0-9 and "-" (1–64 characters)');

/** A control voltage in volts, within the one limit ±MAX_CONTROL_VOLTS (`dsp/calibration/plan.ts`). */
const VoltsSchema = z.number().finite().min(-MAX_CONTROL_VOLTS).max(MAX_CONTROL_VOLTS);

/** One run: a pass over the voltage plan, before or after trimming, with its analysis. */
export const RunSchema = z.strictObject({
  id: RunIdSchema,
  takenAt: isoTime(),
  /** `'before'`, `'after'` or any short label the user types. */
  label: z.string().min(1).max(80),
  /** The voltages the run stepped through, V, in order. */
  plan: z.strictObject({ volts: z.array(VoltsSchema).min(1).max(512) }),
  /** The run's result, in the one result shape (`dsp/calibration/result.ts`). */
  result: CalibrationResultSchema.refine(isRunResult, 'every step of a saved run needs its voltage'),
});

/** A run moved to the record's trash: the run as it was, and when it was deleted. Restorable. */
export const TrashedRunSchema = z.strictObject({
  run: RunSchema,
  deletedAt: isoTime(),
});

const recordFields = {
  schemaVersion: z.literal(RECORD_SCHEMA_VERSION),
  unitName: z.string().trim().min(1).max(120),
  serial: z.string().max(80).optional(),
  notes: z.string().max(20_000).optional(),
  /** Room temperature during the runs, °C. */
  roomTempC: finite().min(-40).max(80).optional(),
  /** The meter used for the reference voltages, free text (make, model, range). */
  meterUsed: z.string().max(120).optional(),
  /** Warm-up before the first run, minutes. */
  warmUpMinutes: finite()
    .min(0)
    .max(24 * 60)
    .optional(),
  /**
   * The unit's tracking tolerance, ± cents: a run passes when every step lies within it of the ideal
   * 1 V/oct line through its lowest step. Absent: the app's default (2 cents, docs/facts.md).
   */
  toleranceCents: finite().positive().max(100).optional(),
  runs: z.array(RunSchema).max(1000),
  /**
   * The record's revision: 1 when first stored, one more on every change. In a draft it is the revision
   * the save was based on; a save based on an older revision is merged when it only adds runs, and
   * refused otherwise (`conflict`). Absent in records stored before revisions existed (read as 0).
   */
  revision: z.number().int().nonnegative().optional(),
  /** Runs deleted from the record, newest last, restorable. Runs are never edited or dropped. */
  trash: z.array(TrashedRunSchema).max(1000).optional(),
  /** Set when the whole record was deleted: it is kept, listed in the trash, and restorable. */
  deletedAt: isoTime().optional(),
};

/** A unit record as stored on disk and returned by `records:load`: schema version {@link RECORD_SCHEMA_VERSION}. */
export const UnitRecordSchema = z.strictObject({
  ...recordFields,
  id: RecordIdSchema,
  createdAt: isoTime(),
  updatedAt: isoTime(),
});

/**
 * What `records:save` accepts: a record whose `id` and `createdAt` may be missing (a new record).
 * The main process fills in `id` (slug of the unit name + random suffix), `createdAt` when absent,
 * and always sets `updatedAt` to the time of saving.
 */
export const UnitRecordDraftSchema = z.strictObject({
  ...recordFields,
  id: RecordIdSchema.optional(),
  createdAt: isoTime().optional(),
  updatedAt: isoTime().optional(),
});

/** One line of the record list. */
export const RecordSummarySchema = z.strictObject({
  id: RecordIdSchema,
  unitName: z.string(),
  serial: z.string().optional(),
  createdAt: isoTime(),
  updatedAt: isoTime(),
  runCount: z.number().int().nonnegative(),
  /** `takenAt` of the newest run, when there is one. */
  lastRunAt: isoTime().optional(),
});

/** A file in the records folder that could not be listed, and why. */
export const RecordProblemSchema = z.strictObject({
  /** The file's name inside the records folder (never a full path). */
  file: z.string(),
  code: z.enum(ERROR_CODES),
  message: z.string(),
});

export const RecordListSchema = z.strictObject({
  /** Newest `updatedAt` first. */
  records: z.array(RecordSummarySchema),
  problems: z.array(RecordProblemSchema),
  /** Deleted records, kept and restorable (newest deletion first). Absent from older main processes. */
  trashed: z.array(RecordSummarySchema.extend({ deletedAt: isoTime() })).optional(),
});

/** `records:delete-run` and `records:restore-run`: one run of one record. */
export const RunRefSchema = z.strictObject({ id: RecordIdSchema, runId: RunIdSchema });

/** A drift log's id: same rules as a record id (it names a file). */
export const DriftLogIdSchema = RecordIdSchema;

/** The only drift log schema version this build reads and writes. */
export const DRIFT_LOG_SCHEMA_VERSION = 1;

/**
 * One Hold & drift log: the held voltage and every reading, `[seconds since the hold started, cents
 * against the first second's mean]`. Autosaved while the hold runs (newest `seq` wins), kept in the
 * unit book and its backups, exported as CSV or JSON.
 */
export const DriftLogSchema = z.strictObject({
  schemaVersion: z.literal(DRIFT_LOG_SCHEMA_VERSION),
  id: DriftLogIdSchema,
  /** When the hold started (ISO 8601). */
  startedAt: isoTime(),
  /** When this copy was written. */
  savedAt: isoTime(),
  /** Autosave sequence number within the hold: a copy with a lower `seq` never replaces a higher one. */
  seq: z.number().int().nonnegative(),
  /** Held control voltage, V. */
  volts: VoltsSchema,
  /** Window of the drift-rate estimate, s. */
  windowSeconds: finite().positive(),
  /** The unit, when one was named in the unit book. */
  unitName: z.string().max(120).optional(),
  /** `[t, cents]`: seconds since the hold started, cents against the first second's mean. */
  points: z.array(z.tuple([finite(), finite()])).max(40_000),
});

/** One line of the drift log list. */
export const DriftLogSummarySchema = z.strictObject({
  id: DriftLogIdSchema,
  startedAt: isoTime(),
  savedAt: isoTime(),
  volts: VoltsSchema,
  pointCount: z.number().int().nonnegative(),
  unitName: z.string().optional(),
});

/** What a restore does with a record that differs from the one in the book. */
export const RESTORE_POLICIES = ['ask', 'skip', 'copy'] as const;
export type RestorePolicy = (typeof RESTORE_POLICIES)[number];

/** One record of a backup that cannot be merged without a decision. */
export const RestoreConflictSchema = z.strictObject({
  id: RecordIdSchema,
  unitName: z.string(),
  reason: z.string(),
});

/** Counts of what a restore did (or, for `conflicts`, would do). */
export const RestoreCountsSchema = z.strictObject({
  /** Records that were not in the book and were added. */
  added: z.number().int().nonnegative(),
  /** Records in both whose runs were merged (runs only added). */
  merged: z.number().int().nonnegative(),
  /** Records identical in both, left as they were. */
  unchanged: z.number().int().nonnegative(),
  /** Conflicting records stored as a separate copy with a new id. */
  copied: z.number().int().nonnegative(),
  /** Conflicting records left out. */
  skipped: z.number().int().nonnegative(),
  /** Drift logs added or brought up to date. */
  driftLogs: z.number().int().nonnegative(),
  /** Unreadable entries of the backup kept aside byte for byte. */
  keptAside: z.number().int().nonnegative(),
});

export const RestoreOutcomeSchema = z.discriminatedUnion('kind', [
  z.strictObject({ kind: z.literal('cancelled') }),
  z.strictObject({
    kind: z.literal('conflicts'),
    fileName: z.string(),
    /** Pass back with a policy to apply the restore to the same file without asking again. */
    token: z.string().max(64),
    conflicts: z.array(RestoreConflictSchema),
    counts: RestoreCountsSchema,
  }),
  z.strictObject({ kind: z.literal('restored'), fileName: z.string(), counts: RestoreCountsSchema }),
]);

const NoPayload = z.undefined();
const IdPayload = z.strictObject({ id: RecordIdSchema });
const Cancelled = z.strictObject({ kind: z.literal('cancelled') });

/** A file name without folders, as shown to the user. */
const FileNameSchema = z.string().min(1).max(255);

export const ExportRequestSchema = z.strictObject({
  format: z.enum(['json', 'csv']),
  /** Offered in the save dialog; folders are stripped and the extension added when missing. */
  suggestedName: z.string().min(1).max(200),
  /** The file's full text, UTF-8. */
  content: z.string(),
});

/** Any JSON value: null, boolean, finite number, string, array or plain object of these. */
export const JsonValueSchema = z.json();
/** A JSON value, as the autosave holds it. */
export type JsonValue = z.output<typeof JsonValueSchema>;

export const AutosaveRequestSchema = z.strictObject({
  /** The run in progress, any JSON the renderer chooses. */
  state: JsonValueSchema,
  /** The autosave's sequence number in this session: an older one never replaces a newer one. */
  seq: z.number().int().nonnegative().optional(),
});

export const AutosaveResultSchema = z.discriminatedUnion('kind', [
  z.strictObject({ kind: z.literal('found'), savedAt: isoTime(), state: JsonValueSchema }),
  z.strictObject({ kind: z.literal('none') }),
]);

// ---------------------------------------------------------------------------------------------
// The contract

/** One channel's schemas and limits. */
export interface ChannelSpec {
  request: z.ZodType;
  response: z.ZodType;
  /** Limit on the response in bytes (JSON text plus binary bytes); default {@link MAX_PAYLOAD_BYTES}. */
  maxResponseBytes?: number;
  /** One line for the API's TSDoc and error messages. */
  summary: string;
}

/** Every channel: request schema, response schema, limits. */
export const CONTRACT = {
  'records:list': {
    summary: 'List the stored unit records, with any files that could not be read.',
    request: NoPayload,
    response: RecordListSchema,
  },
  'records:load': {
    summary: 'Load one unit record by id.',
    request: IdPayload,
    response: UnitRecordSchema,
  },
  'records:save': {
    summary: 'Save a unit record (new when it has no id); returns the record as stored.',
    request: UnitRecordDraftSchema,
    response: UnitRecordSchema,
  },
  'records:delete': {
    summary: 'Delete one unit record by id.',
    request: IdPayload,
    response: z.strictObject({ id: RecordIdSchema }),
  },
  'records:export': {
    summary: 'Ask where to save an exported JSON or CSV file, then write it.',
    request: ExportRequestSchema,
    response: z.discriminatedUnion('kind', [
      z.strictObject({ kind: z.literal('saved'), fileName: FileNameSchema }),
      Cancelled,
    ]),
  },
  'records:import': {
    summary: 'Ask for a record file (JSON, at most 1 MiB), then read and check it. Does not store it.',
    request: NoPayload,
    response: z.discriminatedUnion('kind', [
      z.strictObject({ kind: z.literal('imported'), fileName: FileNameSchema, record: UnitRecordSchema }),
      Cancelled,
    ]),
  },
  'records:delete-run': {
    summary: 'Move one run of a record to its trash; returns the record as stored.',
    request: RunRefSchema,
    response: UnitRecordSchema,
  },
  'records:restore-run': {
    summary: 'Bring one run back from its record’s trash; returns the record as stored.',
    request: RunRefSchema,
    response: UnitRecordSchema,
  },
  'records:undelete': {
    summary: 'Bring a deleted record back from the trash; returns the record as stored.',
    request: IdPayload,
    response: UnitRecordSchema,
  },
  'book:backup': {
    summary: 'Ask where to save, then write the whole unit book (records, runs, drift logs) as one file.',
    request: NoPayload,
    response: z.discriminatedUnion('kind', [
      z.strictObject({
        kind: z.literal('saved'),
        fileName: FileNameSchema,
        records: z.number().int().nonnegative(),
        driftLogs: z.number().int().nonnegative(),
      }),
      Cancelled,
    ]),
  },
  'book:restore': {
    summary:
      'Ask for a unit book backup and merge it into the book; conflicts are only resolved as the policy says.',
    request: z.strictObject({ policy: z.enum(RESTORE_POLICIES), token: z.string().max(64).optional() }),
    response: RestoreOutcomeSchema,
  },
  'drift:save': {
    summary: 'Keep a Hold & drift log (a copy with a lower seq never replaces a higher one).',
    request: DriftLogSchema,
    response: z.strictObject({ savedAt: isoTime(), stale: z.boolean() }),
  },
  'drift:list': {
    summary: 'List the kept drift logs, newest first.',
    request: NoPayload,
    response: z.array(DriftLogSummarySchema),
  },
  'drift:load': {
    summary: 'Load one drift log by id.',
    request: z.strictObject({ id: DriftLogIdSchema }),
    response: DriftLogSchema,
  },
  'run:autosave': {
    summary: 'Keep the run in progress on disk, replacing the previous autosave.',
    request: AutosaveRequestSchema,
    response: z.strictObject({ savedAt: isoTime(), stale: z.boolean().optional() }),
  },
  'run:load-autosave': {
    summary: 'Read back the autosaved run, if any.',
    request: NoPayload,
    response: AutosaveResultSchema,
  },
  'run:clear-autosave': {
    summary: 'Remove the autosaved run.',
    request: NoPayload,
    response: z.strictObject({ cleared: z.boolean() }),
  },
} as const satisfies Record<Channel, ChannelSpec>;

/** The request type of channel `C`, as the renderer passes it. */
export type RequestOf<C extends Channel> = z.input<(typeof CONTRACT)[C]['request']>;
/** The response type of channel `C`, as the renderer receives it (inside `IpcResult`). */
export type ResponseOf<C extends Channel> = z.output<(typeof CONTRACT)[C]['response']>;

export type UnitRecord = z.output<typeof UnitRecordSchema>;
export type UnitRecordDraft = z.input<typeof UnitRecordDraftSchema>;
export type Run = z.output<typeof RunSchema>;
export type RecordSummary = z.output<typeof RecordSummarySchema>;
export type RecordProblem = z.output<typeof RecordProblemSchema>;
export type RecordList = z.output<typeof RecordListSchema>;
export type ExportRequest = z.input<typeof ExportRequestSchema>;
export type AutosaveResult = z.output<typeof AutosaveResultSchema>;
export type TrashedRun = z.output<typeof TrashedRunSchema>;
export type DriftLog = z.output<typeof DriftLogSchema>;
export type DriftLogSummary = z.output<typeof DriftLogSummarySchema>;
export type RestoreConflict = z.output<typeof RestoreConflictSchema>;
export type RestoreCounts = z.output<typeof RestoreCountsSchema>;
export type RestoreOutcome = z.output<typeof RestoreOutcomeSchema>;
