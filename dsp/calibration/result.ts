/**
 * The one result of a calibration pass, and its one JSON shape: what `spanmeter analyze --json` prints, what
 * the app's JSON export writes and what a unit record keeps for each run. It is produced in one place,
 * {@link calibrate} in `dsp/calibration/pipeline.ts`, from the captured steps of a live run or a recording.
 *
 * The zod schema is the definition: the TypeScript types are derived from it (`z.output`), so the two cannot
 * drift, and every object in it is exact (an unknown key is refused, never passed through). The shape is
 * versioned by `schemaVersion` ({@link RESULT_SCHEMA_VERSION}); {@link migrateResult} reads every earlier
 * shape (the saved records and both JSON exports of schema 1) into the current one without losing a number.
 *
 * Numbers are plain JSON numbers at full precision; nothing non-finite appears (a quantity that has no
 * value is `null`, and a degree of freedom that is infinite is `null` too).
 */
import { z } from 'zod';
import { A4_HZ, nearestNote } from '../math/index.ts';
import { MAX_CONTROL_VOLTS } from './plan.ts';

/** The version of the result shape this build writes. Shape 1 had no version field. */
export const RESULT_SCHEMA_VERSION = 2;

/**
 * Why a step deserves a second look (the shared names of the run, the recording and the uncertainty budget):
 * `spans-break` (the capture window spans a break in the signal), `still-settling` (the pitch was still
 * drifting), `suspect-voltage` (the pitch fits another voltage of the plan better: see `likelyVolts`),
 * `outside-tolerance-unknown` (the tolerance could not be judged).
 */
export const STEP_FLAGS = [
  'spans-break',
  'still-settling',
  'suspect-voltage',
  'outside-tolerance-unknown',
] as const;

const finite = () => z.number().finite();
const nfinite = () => z.number().finite().nullable();
/** A control voltage, V, within the one limit ±{@link MAX_CONTROL_VOLTS} (`dsp/calibration/plan.ts`). */
const volts = () => z.number().finite().min(-MAX_CONTROL_VOLTS).max(MAX_CONTROL_VOLTS);

/**
 * Standard uncertainties of one step, cents (1σ, JCGM 100:2008): the estimator's own, the repeatability of
 * the capture and the settling residue; `dof` is the effective degrees of freedom of the Type A part (null
 * when unknown or infinite). The step's `uncertaintyCents` is their root-sum-square.
 */
export const StepComponentsSchema = z.strictObject({
  estimatorCents: finite().nonnegative(),
  repeatabilityCents: finite().nonnegative(),
  settlingCents: finite().nonnegative(),
  dof: finite().positive().nullable(),
});

/** One term of an uncertainty budget (JCGM 100:2008 §8): a standard uncertainty in cents. */
export const BudgetTermSchema = z.strictObject({
  /** What the term is (`estimator`, `reference-voltage`, `clock`, `temperature`, …). */
  source: z.string().min(1).max(80),
  /** `A` (evaluated from readings) or `B` (from a specification or a model). */
  type: z.enum(['A', 'B']),
  standardCents: finite().nonnegative(),
  /** Degrees of freedom; null when infinite or unknown. */
  dof: finite().positive().nullable(),
});

/** An uncertainty budget of one quantity: its terms, the combined and the expanded uncertainty. */
export const BudgetSchema = z.strictObject({
  terms: z.array(BudgetTermSchema).max(32),
  combinedCents: finite().nonnegative(),
  /** Coverage factor k of the expanded uncertainty (2 for about 95 % with many degrees of freedom). */
  coverageFactor: finite().positive(),
  expandedCents: finite().nonnegative(),
});

/** How a step was measured, where known: its source and window, and the reading's quality figures. */
export const StepCaptureSchema = z.strictObject({
  /**
   * `window`: one precise window over a recorded plateau; `readings`: the mean of a recording's live readings
   * (a step too short for a window); `host`: a live run's long average; `live-mean`: a live run's fallback.
   */
  source: z.enum(['window', 'readings', 'host', 'live-mean']),
  /** The settled span (recording) or capture window (live run), seconds of the stream. */
  startSeconds: nfinite(),
  endSeconds: nfinite(),
  /** The window measured, seconds. */
  windowStartSeconds: nfinite(),
  windowEndSeconds: nfinite(),
  harmonicsUsed: z.number().int().nonnegative().nullable(),
  clarity: nfinite(),
  rmsDbfs: nfinite(),
  peakDbfs: nfinite(),
});

/** One measured step. */
export const ResultStepSchema = z.strictObject({
  /** The step's place in the plan (or in the recording), 0-based. */
  index: z.number().int().nonnegative(),
  /** Nominal control voltage, V; null for a single tone of unknown voltage. */
  volts: volts().nullable(),
  /** The meter reading at the input jack, V, or null when none was entered. */
  measuredVolts: volts().nullable(),
  /** Measured frequency with the clock correction applied, Hz. */
  hz: z.number().finite().positive().max(200_000),
  /** Standard uncertainty of `hz`, cents (1σ, JCGM 100:2008). */
  uncertaintyCents: finite().nonnegative(),
  /** Nearest 12-TET note at the result's `a4Hz` (middle C = C4), its frequency and the cents from it. */
  note: z.string().min(1).max(8),
  noteHz: z.number().finite().positive(),
  centsFromNote: finite(),
  /** Error from the ideal 1 V/oct line through the first step, cents (0 for the first); null without volts. */
  centsFromIdeal: nfinite(),
  /** Its standard uncertainty, cents; null without volts or when not recorded (schema 1). */
  centsFromIdealUncertainty: nfinite(),
  /** Interval to the previous step minus 1200 cents per volt; null for the first step or without volts. */
  intervalErrorCents: nfinite(),
  intervalUncertaintyCents: nfinite(),
  /** What deserves a second look (empty when all is well). */
  flags: z.array(z.enum(STEP_FLAGS)).max(STEP_FLAGS.length),
  /** The parts of `uncertaintyCents`, when the measurement reported them. */
  components: StepComponentsSchema.nullable(),
  /** With `suspect-voltage`: the plan voltage the pitch fits best, V; else null. */
  likelyVolts: volts().nullable(),
  /** The step's uncertainty budget, when one was made. */
  budget: BudgetSchema.nullable(),
  /** How it was measured, when known (null for steps migrated from schema 1). */
  capture: StepCaptureSchema.nullable(),
});

/** Where a bend leaves the range: `straight`, or `flat`/`sharp` with the end step's deviation, cents. */
const EndSchema = z.strictObject({
  kind: z.enum(['straight', 'flat', 'sharp']),
  centsAtEnd: nfinite(),
});

/**
 * The weighted least-squares tracking fit (`dsp/model/fit.ts`) with its bend analysis. The first four fields are
 * always there; the others are null in a result migrated from schema 1, which did not keep them.
 */
export const ResultFitSchema = z.strictObject({
  octavesPerVolt: finite(),
  scaleErrorCentsPerOctave: finite(),
  hzAt0V: z.number().finite().positive(),
  /** Largest |residual| of the fit, cents. */
  maxResidualCents: finite().nonnegative(),
  octavesPerVoltStdErr: nfinite(),
  scaleErrorStdErrCents: nfinite(),
  hzAt0VStdErrCents: nfinite(),
  residualsCents: z.array(finite()).max(512).nullable(),
  /** Lowest and highest voltage of the steps fitted, V. */
  fromVolts: nfinite(),
  toVolts: nfinite(),
  chiSquaredPerDof: nfinite(),
  /** Scale error of the trusted middle of the range (bends excluded), cents per octave. */
  middleScaleErrorCentsPerOctave: nfinite(),
  highEnd: EndSchema.nullable(),
  lowEnd: EndSchema.nullable(),
  /**
   * The calibration model behind every figure above (`dsp/model/model.ts`): its terms, how they were chosen, the HF
   * term as an equivalent reset time, and the steps it left out as suspect. Absent in older results.
   */
  model: z
    .strictObject({
      hfTerm: z.enum(['none', 'reset-time', 'bulk-resistance', 'both']),
      lowEndTerm: z.boolean(),
      criterion: z.literal('AICc'),
      equivalentResetSeconds: nfinite(),
      equivalentResetSecondsStdErr: nfinite(),
      mixtureResolved: z.boolean(),
      resetSeconds: finite(),
      bulkAlphaSeconds: finite(),
      lowEndHz: finite(),
      suspectSteps: z.array(z.number().int().nonnegative()).max(512),
    })
    .nullable()
    .optional(),
  /** The straight line through every step in the range, suspect steps and bends included (labelled as such). */
  straightLine: z
    .strictObject({
      octavesPerVolt: finite(),
      scaleErrorCentsPerOctave: finite(),
      hzAt0V: z.number().finite().positive(),
      maxResidualCents: finite().nonnegative(),
    })
    .nullable()
    .optional(),
  /** GUM budgets of the scale error (cents per octave) and the 0 V pitch (cents). */
  scaleBudget: BudgetSchema.nullable().optional(),
  pitchAt0VBudget: BudgetSchema.nullable().optional(),
  /** The tolerance verdict over the range (guarded: |error| + U inside). */
  tolerance: z
    .strictObject({
      toleranceCents: z.number().finite().positive(),
      verdict: z.enum(['within', 'outside', 'cannot-tell']),
      text: z.string().min(1).max(2000),
    })
    .nullable()
    .optional(),
  /** Set when the steps failed a plausibility gate: no trim is advised. */
  refusal: z
    .strictObject({
      reason: z.enum(['falling-pitch', 'implausible-scale', 'inconsistent-steps']),
      message: z.string().min(1).max(2000),
    })
    .nullable()
    .optional(),
});

const PreferredSchema = z.strictObject({
  series: z.enum(['E24', 'E96']),
  ohms: z.number().finite().positive(),
  errorPercent: finite(),
  lowerOhms: z.number().finite().positive(),
  upperOhms: z.number().finite().positive(),
  resultingScaleErrorCentsPerOctave: finite(),
});

/** A resistor value that would correct the scale (`dsp/advice/advice.ts` ResistorChange), with E24/E96 values. */
export const ResistorChangeSchema = z.strictObject({
  part: z.enum(['series', 'shunt', 'input', 'feedback']),
  fromOhms: z.number().finite().positive(),
  toOhms: z.number().finite().positive(),
  e24: PreferredSchema,
  e96: PreferredSchema,
  /** The E96 value's outcome at the part's tolerance, and whether it beats no change. */
  withTolerance: z
    .strictObject({
      tolerancePercent: z.number().finite().positive(),
      lowCentsPerOctave: finite(),
      highCentsPerOctave: finite(),
      betterThanNoChange: z.boolean(),
    })
    .optional(),
});

/** One piece of advice: a trim item, the next measurement, or the caution. */
export const ResultAdviceSchema = z.strictObject({
  text: z.string().min(1).max(2000),
  trimmer: z.enum(['scale', 'offset', 'hf', 'none']),
  kind: z.enum(['trim', 'next', 'caution']),
  status: z.enum(['adjust', 'within-tolerance', 'unresolved', 'note']).nullable(),
  direction: z.enum(['widen', 'narrow', 'raise', 'lower', 'more-compensation', 'less-compensation', 'none']),
  errorCents: nfinite(),
  gainChangePercent: nfinite(),
  millivoltsAtInput: nfinite(),
  resistors: z.array(ResistorChangeSchema).max(8).nullable(),
  /** Expanded uncertainty of `errorCents`, cents (k from the budget); absent in older results. */
  uncertaintyCents: nfinite().optional(),
  /** The reading to trim to: the step at `volts` should read `hz` (an interval of `intervalCents` from `fromVolts`). */
  target: z
    .strictObject({
      volts: finite(),
      hz: z.number().finite().positive(),
      nowHz: z.number().finite().positive(),
      fromVolts: finite(),
      fromHz: z.number().finite().positive(),
      intervalCents: finite(),
      nowIntervalCents: finite(),
      /** A target that follows the interval from `fromVolts` to `volts` as read just before the trim (the HF trim). */
      relativeTo: z
        .strictObject({ fromVolts: finite(), volts: finite(), ratio: finite(), plusCents: finite() })
        .nullable()
        .optional(),
    })
    .nullable()
    .optional(),
});

/** The result of a calibration pass, schema {@link RESULT_SCHEMA_VERSION}. */
export const CalibrationResultSchema = z.strictObject({
  schemaVersion: z.literal(RESULT_SCHEMA_VERSION),
  /** Tuning reference of the note names, Hz. */
  a4Hz: z.number().finite().min(380).max(500),
  /** The clock correction applied to every frequency, ppm (positive = the interface ran fast); null when not recorded. */
  clockPpm: nfinite(),
  /** The fit range asked for, V (inclusive); null for no limit (or not recorded). */
  fitFromVolts: volts().nullable(),
  fitToVolts: volts().nullable(),
  /** The scale trimmer's pivot the advice assumed, V; absent when it was not known. */
  scalePivotVolts: volts().optional(),
  /** Steps in plan (or recording) order. */
  steps: z.array(ResultStepSchema).max(512),
  /** The tracking fit; null with fewer than two steps at distinct voltages, or without volts. */
  fit: ResultFitSchema.nullable(),
  /** The trim items, then the next measurement, then the caution; empty without volts. */
  advice: z.array(ResultAdviceSchema).max(100),
  /** Set when the result was read from an older shape: the schema it came from. */
  migratedFrom: z.literal(1).optional(),
});

export type StepFlag = (typeof STEP_FLAGS)[number];
export type StepComponents = z.output<typeof StepComponentsSchema>;
export type UncertaintyBudget = z.output<typeof BudgetSchema>;
export type StepCaptureInfo = z.output<typeof StepCaptureSchema>;
export type ResultStep = z.output<typeof ResultStepSchema>;
export type ResultFit = z.output<typeof ResultFitSchema>;
export type ResultAdvice = z.output<typeof ResultAdviceSchema>;
/** The one result of a calibration pass (see the module comment). */
export type CalibrationResult = z.output<typeof CalibrationResultSchema>;

// ---------------------------------------------------------------------------------------------------
// Schema 1 (no version field): the saved record's `result` and the two JSON exports

const v1Step = z.object({
  volts: z.number().finite().nullable(),
  hz: z.number().finite().positive(),
  uncertaintyCents: finite().nonnegative(),
  centsFromIdeal: nfinite(),
  intervalErrorCents: nfinite(),
  measuredVolts: z.number().finite().nullable().optional(),
  centsFromIdealUncertainty: nfinite().optional(),
  intervalUncertaintyCents: nfinite().optional(),
  startSeconds: finite().optional(),
  endSeconds: finite().optional(),
  windowStartSeconds: finite().optional(),
  windowEndSeconds: finite().optional(),
  source: z.enum(['window', 'readings']).optional(),
  harmonicsUsed: z.number().int().nonnegative().nullable().optional(),
  clarity: nfinite().optional(),
  rmsDbfs: nfinite().optional(),
  peakDbfs: nfinite().optional(),
  a4Hz: z.number().finite().min(380).max(500).optional(),
});
const v1Fit = z.object({
  octavesPerVolt: finite(),
  scaleErrorCentsPerOctave: finite(),
  hzAt0V: z.number().finite().positive(),
  maxResidualCents: finite().nonnegative(),
  octavesPerVoltStdErr: finite().optional(),
  scaleErrorStdErrCents: finite().optional(),
  hzAt0VStdErrCents: finite().optional(),
  residualsCents: z.array(finite()).optional(),
  fromVolts: finite().optional(),
  toVolts: finite().optional(),
  chiSquaredPerDof: nfinite().optional(),
  middleScaleErrorCentsPerOctave: nfinite().optional(),
  highEnd: EndSchema.optional(),
  lowEnd: EndSchema.optional(),
});
const v1Advice = z.object({
  text: z.string().min(1).max(2000),
  trimmer: ResultAdviceSchema.shape.trimmer.optional(),
  kind: ResultAdviceSchema.shape.kind.optional(),
  status: ResultAdviceSchema.shape.status.optional(),
  direction: ResultAdviceSchema.shape.direction.optional(),
  errorCents: nfinite().optional(),
  gainChangePercent: nfinite().optional(),
  millivoltsAtInput: nfinite().optional(),
  resistors: z.array(ResistorChangeSchema).nullable().optional(),
});
const v1Result = z.object({
  steps: z.array(v1Step).max(512),
  fit: v1Fit.nullable(),
  advice: z.array(v1Advice).max(100),
});

/** Outcome of {@link migrateResult}. */
export type ResultMigration =
  | { readonly kind: 'ok'; readonly result: CalibrationResult }
  | { readonly kind: 'error'; readonly message: string };

function issuesText(error: z.ZodError): string {
  return error.issues
    .slice(0, 3)
    .map((i) => `${i.path.join('.') || '(top)'}: ${i.message}`)
    .join('; ');
}

/**
 * Reads a result in any shape Spanmeter has written: the current schema as it is, or schema 1 (no
 * `schemaVersion`: a saved record's `result`, `analyze --json` or the app's JSON export of a live run),
 * moved into the current shape. Every number schema 1 held is kept as it was; what it did not hold
 * (uncertainties of the table columns, most fit statistics, the clock correction) becomes null. Note names
 * are derived from the frequency at 440 Hz, the only reference schema 1 records were made with (ISO 16:1975).
 * Advice items of a live run (schema 1 kept no `kind`) are trim items; any item missing a field gets its
 * neutral value (`trimmer: 'none'`, `direction: 'none'`, nulls).
 *
 * @param value - Parsed JSON.
 * @returns The result, or a one-line message naming what does not fit.
 * @example migrateResult({ steps: [], fit: null, advice: [] }) // { kind: 'ok', result: { schemaVersion: 2, migratedFrom: 1, … } }
 */
export function migrateResult(value: unknown): ResultMigration {
  if (typeof value === 'object' && value !== null && 'schemaVersion' in value) {
    const r = CalibrationResultSchema.safeParse(value);
    return r.success
      ? { kind: 'ok', result: r.data }
      : { kind: 'error', message: `not a result of schema ${RESULT_SCHEMA_VERSION}: ${issuesText(r.error)}` };
  }
  const old = v1Result.safeParse(value);
  if (!old.success) return { kind: 'error', message: `not a Spanmeter result: ${issuesText(old.error)}` };
  const v = old.data;
  const a4Hz = v.steps.find((s) => s.a4Hz !== undefined)?.a4Hz ?? A4_HZ;
  const hasCapture = (s: (typeof v.steps)[number]) =>
    s.startSeconds !== undefined || s.source !== undefined || s.harmonicsUsed != null || s.clarity != null;
  const result: CalibrationResult = {
    schemaVersion: RESULT_SCHEMA_VERSION,
    a4Hz,
    clockPpm: null,
    fitFromVolts: null,
    fitToVolts: null,
    steps: v.steps.map((s, index): ResultStep => {
      const note = nearestNote(s.hz, a4Hz);
      return {
        index,
        volts: s.volts,
        measuredVolts: s.measuredVolts ?? null,
        hz: s.hz,
        uncertaintyCents: s.uncertaintyCents,
        note: note.name,
        noteHz: note.noteHz,
        centsFromNote: note.cents,
        centsFromIdeal: s.centsFromIdeal,
        centsFromIdealUncertainty: s.centsFromIdealUncertainty ?? null,
        intervalErrorCents: s.intervalErrorCents,
        intervalUncertaintyCents: s.intervalUncertaintyCents ?? null,
        flags: [],
        components: null,
        likelyVolts: null,
        budget: null,
        capture: hasCapture(s)
          ? {
              source: s.source ?? 'host',
              startSeconds: s.startSeconds ?? null,
              endSeconds: s.endSeconds ?? null,
              windowStartSeconds: s.windowStartSeconds ?? null,
              windowEndSeconds: s.windowEndSeconds ?? null,
              harmonicsUsed: s.harmonicsUsed ?? null,
              clarity: s.clarity ?? null,
              rmsDbfs: s.rmsDbfs ?? null,
              peakDbfs: s.peakDbfs ?? null,
            }
          : null,
      };
    }),
    fit: v.fit
      ? {
          octavesPerVolt: v.fit.octavesPerVolt,
          scaleErrorCentsPerOctave: v.fit.scaleErrorCentsPerOctave,
          hzAt0V: v.fit.hzAt0V,
          maxResidualCents: v.fit.maxResidualCents,
          octavesPerVoltStdErr: v.fit.octavesPerVoltStdErr ?? null,
          scaleErrorStdErrCents: v.fit.scaleErrorStdErrCents ?? null,
          hzAt0VStdErrCents: v.fit.hzAt0VStdErrCents ?? null,
          residualsCents: v.fit.residualsCents ?? null,
          fromVolts: v.fit.fromVolts ?? null,
          toVolts: v.fit.toVolts ?? null,
          chiSquaredPerDof: v.fit.chiSquaredPerDof ?? null,
          middleScaleErrorCentsPerOctave: v.fit.middleScaleErrorCentsPerOctave ?? null,
          highEnd: v.fit.highEnd ?? null,
          lowEnd: v.fit.lowEnd ?? null,
        }
      : null,
    advice: v.advice.map((a): ResultAdvice => ({
      text: a.text,
      trimmer: a.trimmer ?? 'none',
      kind: a.kind ?? 'trim',
      status: a.status ?? null,
      direction: a.direction ?? 'none',
      errorCents: a.errorCents ?? null,
      gainChangePercent: a.gainChangePercent ?? null,
      millivoltsAtInput: a.millivoltsAtInput ?? null,
      resistors: a.resistors ?? null,
    })),
    migratedFrom: 1,
  };
  const checked = CalibrationResultSchema.safeParse(result);
  return checked.success
    ? { kind: 'ok', result: checked.data }
    : {
        kind: 'error',
        message: `a schema 1 result that cannot be moved to schema 2: ${issuesText(checked.error)}`,
      };
}

/**
 * True when a result can be kept as a run of a unit record: at least one step, every step at a known
 * voltage (a single tone of unknown voltage is a measurement, not a run).
 *
 * @example isRunResult(result) // true for a finished run
 */
export function isRunResult(result: CalibrationResult): boolean {
  return result.steps.length > 0 && result.steps.every((s) => s.volts !== null && s.centsFromIdeal !== null);
}

/**
 * The JSON text of a result: what `spanmeter analyze --json` prints and the app's JSON export writes.
 * Numbers keep full precision (JSON round-trips a double exactly).
 *
 * @example JSON.parse(resultToJsonText(result)).schemaVersion // 2
 */
export function resultToJsonText(result: CalibrationResult): string {
  return JSON.stringify(result);
}
