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
import { recordIdProblem } from './record-id.ts';

export { CHANNELS, type Channel };

/** One mebibyte, 1 048 576 bytes. */
export const MiB = 1024 * 1024;

/** Default limit on a request or response, measured as UTF-8 bytes of its JSON text: 1 MiB. */
export const MAX_PAYLOAD_BYTES = 1 * MiB;

/** Largest WAV file `wav:open` reads: 200 MiB (about 18 minutes of 48 kHz 32-bit float stereo). */
export const MAX_WAV_BYTES = 200 * MiB;

/** Largest record file `records:import` reads: the same 1 MiB as any payload. */
export const MAX_RECORD_FILE_BYTES = MAX_PAYLOAD_BYTES;

/** The only record schema version this build reads and writes. */
export const RECORD_SCHEMA_VERSION = 1;

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

/** A control voltage in volts. ±20 V bounds any 1 V/oct CV source (common practice, no source). */
const VoltsSchema = z.number().finite().min(-20).max(20);

/** One measured step of a run: what the analysis reported for one control voltage. */
export const StepResultSchema = z.strictObject({
  /** Planned control voltage, V. */
  volts: VoltsSchema,
  /** Measured frequency, Hz, > 0. */
  hz: z.number().finite().positive().max(200_000),
  /** Standard uncertainty of the reading, cents, ≥ 0. */
  uncertaintyCents: finite().nonnegative(),
  /** Pitch relative to the ideal 1 V/oct line through the reference, cents. */
  centsFromIdeal: finite(),
  /** Error of the interval from the previous step, cents; `null` for the first step. */
  intervalErrorCents: finite().nullable(),
  /** The voltage the meter read at the input jack, V, when the user typed one in. */
  measuredVolts: VoltsSchema.optional(),
});

/** The least-squares fit of log2(frequency) against volts, or `null` when too few steps. */
export const FitSchema = z
  .strictObject({
    octavesPerVolt: finite(),
    scaleErrorCentsPerOctave: finite(),
    hzAt0V: z.number().finite().positive(),
    maxResidualCents: finite().nonnegative(),
  })
  .nullable();

/** One piece of advice. Loosely typed on purpose: only `text` is required; other keys are kept. */
export const AdviceSchema = z.looseObject({ text: z.string().min(1).max(2000) });

/** The analysis of one run, as the renderer's analysis produces it. */
export const AnalysisResultSchema = z.strictObject({
  steps: z.array(StepResultSchema).max(512),
  fit: FitSchema,
  advice: z.array(AdviceSchema).max(100),
});

/** One run: a pass over the voltage plan, before or after trimming, with its analysis. */
export const RunSchema = z.strictObject({
  id: RunIdSchema,
  takenAt: isoTime(),
  /** `'before'`, `'after'` or any short label the user types. */
  label: z.string().min(1).max(80),
  /** The voltages the run stepped through, V, in order. */
  plan: z.strictObject({ volts: z.array(VoltsSchema).min(1).max(512) }),
  result: AnalysisResultSchema,
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
   * 1 V/oct line through its lowest step. Absent: the app's default (2 cents, FIELD-NOTES).
   */
  toleranceCents: finite().positive().max(100).optional(),
  runs: z.array(RunSchema).max(1000),
};

/** A unit record as stored on disk and returned by `records:load`: schema version 1. */
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
});

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
});

export const AutosaveResultSchema = z.discriminatedUnion('kind', [
  z.strictObject({ kind: z.literal('found'), savedAt: isoTime(), state: JsonValueSchema }),
  z.strictObject({ kind: z.literal('none') }),
]);

export const AppInfoSchema = z.strictObject({
  name: z.string(),
  version: z.string(),
  platform: z.enum([
    'aix',
    'android',
    'darwin',
    'freebsd',
    'haiku',
    'linux',
    'openbsd',
    'sunos',
    'win32',
    'cygwin',
    'netbsd',
  ]),
  arch: z.string(),
  /** Versions of Electron and Chromium, for bug reports. */
  electron: z.string(),
  chrome: z.string(),
});

export const WavOpenResultSchema = z.discriminatedUnion('kind', [
  z
    .strictObject({
      kind: z.literal('opened'),
      fileName: FileNameSchema,
      sizeBytes: z.number().int().nonnegative().max(MAX_WAV_BYTES),
      /** The whole file, undecoded. */
      bytes: z.instanceof(Uint8Array),
    })
    .refine((v) => v.bytes.byteLength === v.sizeBytes, 'bytes.byteLength must equal sizeBytes'),
  Cancelled,
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
  'run:autosave': {
    summary: 'Keep the run in progress on disk, replacing the previous autosave.',
    request: AutosaveRequestSchema,
    response: z.strictObject({ savedAt: isoTime() }),
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
  'app:info': {
    summary: 'Name, version and platform of the running app.',
    request: NoPayload,
    response: AppInfoSchema,
  },
  'wav:open': {
    summary: 'Ask for a WAV file (at most 200 MiB) and return its bytes, undecoded.',
    request: NoPayload,
    response: WavOpenResultSchema,
    // Documented exception to the 1 MiB limit: the file's bytes plus a little JSON around them.
    maxResponseBytes: MAX_WAV_BYTES + 64 * 1024,
  },
} as const satisfies Record<Channel, ChannelSpec>;

/** The request type of channel `C`, as the renderer passes it. */
export type RequestOf<C extends Channel> = z.input<(typeof CONTRACT)[C]['request']>;
/** The response type of channel `C`, as the renderer receives it (inside `IpcResult`). */
export type ResponseOf<C extends Channel> = z.output<(typeof CONTRACT)[C]['response']>;

export type UnitRecord = z.output<typeof UnitRecordSchema>;
export type UnitRecordDraft = z.input<typeof UnitRecordDraftSchema>;
export type Run = z.output<typeof RunSchema>;
export type StepResult = z.output<typeof StepResultSchema>;
export type AnalysisResult = z.output<typeof AnalysisResultSchema>;
export type RecordSummary = z.output<typeof RecordSummarySchema>;
export type RecordProblem = z.output<typeof RecordProblemSchema>;
export type RecordList = z.output<typeof RecordListSchema>;
export type ExportRequest = z.input<typeof ExportRequestSchema>;
export type AutosaveResult = z.output<typeof AutosaveResultSchema>;
export type AppInfo = z.output<typeof AppInfoSchema>;
export type WavOpenResult = z.output<typeof WavOpenResultSchema>;
