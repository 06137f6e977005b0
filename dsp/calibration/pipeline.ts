/**
 * The one path from captured steps to a result, shared by the live run (`dsp/calibration/run.ts`, in the engine worker),
 * the recording analysis (`dsp/recording/recording.ts`: `spanmeter analyze` and the app's Open WAV…):
 *
 * ```
 * captured steps ──► clock correction ──► error table ──► tracking fit + bends ──► trim advice ──► result
 *   (raw Hz)          correctClock()       dsp/calibration/table.ts     dsp/model/fit.ts              dsp/advice/advice.ts    dsp/calibration/result.ts
 * ```
 *
 * The clock correction happens here and nowhere else: steps come in as measured against the interface's
 * clock (`rawHz`) and every later figure (table, fit, advice, the result's `hz`) uses the corrected frequency.
 * At 1 V/oct a volt is an octave, 1200 cents, and cents are `1200·log2(f1/f2)` (A. J. Ellis, 1885; see
 * docs/facts.md, "The 1 V/oct scale").
 */
import {
  adviseTrim,
  inputNetworkGain,
  type AdviceItem,
  type InputNetwork,
  type TrimAdvice,
} from '../advice/index.ts';
import { assessSteps, budgetToJson, modelAsTrackingFit, type Assessment } from './assessment.ts';
import type { BudgetOptions } from '../model/index.ts';
import { applyClockPpm, MAX_CLOCK_PPM } from '../io/index.ts';
import { hfCents, lowEndCents, modelHz } from '../model/index.ts';
import {
  analyzeBends,
  fitTracking,
  type BendAnalysis,
  type BendAnalysisOk,
  type TrackingFit,
  type TrackingFitNone,
  type TrackingPoint,
} from '../model/index.ts';
import { A4_HZ, nearestNote } from '../math/index.ts';
import { MAX_CONTROL_VOLTS as MAX_VOLTS } from './plan.ts';
import type { RunState } from './run.ts';
import {
  RESULT_SCHEMA_VERSION,
  type CalibrationResult,
  type ResultAdvice,
  type ResultFit,
  type ResultStep,
  type StepCaptureInfo,
  type StepComponents,
  type StepFlag,
  type UncertaintyBudget,
} from './result.ts';
import { buildErrorTable, type ErrorTable, type TableRow } from './table.ts';
import type { Cents, Hertz, Ppm, Volts } from '../math/index.ts';

/** One captured step, as the live run or the recording measured it. */
export interface CapturedStep {
  /** Its place in the plan (or the recording), 0-based. */
  readonly index: number;
  /** Nominal control voltage, V, within ±{@link MAX_VOLTS}; null for a single tone of unknown voltage. */
  readonly volts: Volts | null;
  /** The meter reading at the input jack, V, or null. */
  readonly measuredVolts: Volts | null;
  /** The frequency as measured against the interface's clock, Hz, > 0 (not clock-corrected). */
  readonly rawHz: Hertz;
  /** Standard uncertainty of the reading, cents, ≥ 0. */
  readonly uncertaintyCents: Cents;
  /** What deserves a second look. Default none. */
  readonly flags?: readonly StepFlag[];
  /** The parts of `uncertaintyCents` (`dof` may be Infinity). Default unknown. */
  readonly components?: StepComponents | { readonly dof: number } | null;
  /** With `suspect-voltage`: the plan voltage the pitch fits best, V. */
  readonly likelyVolts?: Volts | null;
  /** The step's uncertainty budget, when one was made. */
  readonly budget?: UncertaintyBudget | null;
  /** How it was measured. */
  readonly capture?: StepCaptureInfo | null;
}

/** The fit range and input network, as the Setup and the command line give them. */
export interface CalibrationOptions {
  /** Lowest control voltage the fit, bends and advice use, V (inclusive), within ±12. Default: no limit. */
  readonly fitFromVolts?: Volts;
  /** Highest control voltage they use, V (inclusive), within ±12, not below `fitFromVolts`. Default: no limit. */
  readonly fitToVolts?: Volts;
  /** The input network, for resistor values in the scale advice (`dsp/advice/advice.ts`). */
  readonly network?: InputNetwork;
  /**
   * The voltage the scale trimmer turns about, V, within ±12, when it is known (measured while turning it,
   * `scalePivotVolts` in dsp/advice/advice.ts): the offset is then set on the step nearest it, which a scale
   * trim leaves in place. Default: unknown (the offset is set on the middle step).
   */
  readonly scalePivotVolts?: Volts;
}

/** Options of {@link calibrate}. */
export interface CalibrateOptions extends CalibrationOptions {
  /** Tuning reference for note names, Hz, 380…500. Default 440 (ISO 16:1975). */
  readonly a4Hz?: Hertz;
  /** The interface clock's error, ppm (positive = fast), within ±1000 (`dsp/io/clock.ts`). Default 0. */
  readonly clockPpm?: Ppm;
  /** Meter, source accuracy, clock uncertainty and temperature for the uncertainty budget (`dsp/model/budget.ts`). */
  readonly budget?: BudgetOptions;
  /** Tolerance over the range in use, cents, > 0 (`dsp/model/tolerance.ts`). Default 1. */
  readonly toleranceCents?: Cents;
  /** The pitch the unit should play at a voltage. Default: the nearest note at the lowest step used. */
  readonly offsetTarget?: { readonly volts: Volts; readonly hz: Hertz };
}

/** What {@link calibrate} returns: the result, and the objects the app's views draw from. */
export interface Calibration {
  /** The one result (its JSON is the command line's, the export's and the record's). */
  readonly result: CalibrationResult;
  /** The error table; null when a step has no voltage. */
  readonly table: ErrorTable | null;
  /** The tracking fit (the typed "none" with too few steps or without voltages). */
  readonly fit: TrackingFit;
  /** The bend analysis of the same steps. */
  readonly bends: BendAnalysis;
  /** The trim advice; null without voltages. */
  readonly advice: TrimAdvice | null;
  /**
   * The calibration model with its flags, budgets, tolerance verdict and advice (`dsp/calibration/assessment.ts`); null
   * without voltages. `fit` is this model in the straight-line fit's shape, and `advice` its advice.
   */
  readonly assessment?: Assessment | null;
}

function checkNumber(name: string, v: unknown, lo: number, hi: number): number {
  if (typeof v !== 'number' || !Number.isFinite(v) || v < lo || v > hi) {
    throw new RangeError(`${name} must be a finite number from ${lo} to ${hi}, got ${String(v)}`);
  }
  return v;
}

/**
 * Checks the fit range and network, throwing a RangeError that names the option.
 *
 * @example checkCalibrationOptions({ fitFromVolts: 5, fitToVolts: 1 }) // throws 'fitFromVolts (5) must not exceed fitToVolts (1)'
 */
export function checkCalibrationOptions(opts: CalibrationOptions): CalibrationOptions {
  const from = opts.fitFromVolts;
  const to = opts.fitToVolts;
  if (from !== undefined) checkNumber('fitFromVolts', from, -MAX_VOLTS, MAX_VOLTS);
  if (to !== undefined) checkNumber('fitToVolts', to, -MAX_VOLTS, MAX_VOLTS);
  if (from !== undefined && to !== undefined && from > to) {
    throw new RangeError(`fitFromVolts (${from}) must not exceed fitToVolts (${to})`);
  }
  // inputNetworkGain checks every resistance and throws a RangeError naming the bad one.
  if (opts.network !== undefined) inputNetworkGain(opts.network);
  const pivot = opts.scalePivotVolts;
  if (pivot !== undefined) checkNumber('scalePivotVolts', pivot, -MAX_VOLTS, MAX_VOLTS);
  return {
    ...(from === undefined ? {} : { fitFromVolts: from }),
    ...(to === undefined ? {} : { fitToVolts: to }),
    ...(opts.network === undefined ? {} : { network: opts.network }),
    ...(pivot === undefined ? {} : { scalePivotVolts: pivot }),
  };
}

/** What {@link fitAndAdvise} returns. */
export interface FitAndAdvice {
  /** The weighted least-squares fit over the steps in the range (`dsp/model/fit.ts` fitTracking). */
  readonly fit: TrackingFit;
  /** The bend analysis of the same steps (`analyzeBends`); the fit's "none" when there is no fit. */
  readonly bends: BendAnalysis;
  /** The trim advice (`dsp/advice/advice.ts` adviseTrim), with resistor values when a network is given. */
  readonly advice: TrimAdvice;
}

/**
 * The tracking fit over the steps whose voltage lies in `[fitFromVolts, fitToVolts]`, the bend analysis of
 * those same steps (so the trusted middle, the HF check and the scale advice all stay inside the range the
 * user chose) and the trim advice, with resistor values when the input network is given. It only selects
 * the steps and hands them to `fitTracking`, `analyzeBends` and `adviseTrim`.
 *
 * @param points - Measured steps (voltage, clock-corrected frequency, uncertainty), any order.
 * @param opts - The fit range and network and `a4Hz`, Hz, 380…500 (default 440, ISO 16:1975).
 * @throws RangeError for invalid points, range or network, naming the field.
 * @example
 * fitAndAdvise(steps, { fitFromVolts: 1, fitToVolts: 5 }).fit // { kind: 'ok', fromVolts: 1, toVolts: 5, … }
 */
export function fitAndAdvise(
  points: readonly TrackingPoint[],
  opts: CalibrationOptions & { readonly a4Hz?: Hertz } = {},
): FitAndAdvice {
  const { fitFromVolts, fitToVolts, network } = checkCalibrationOptions(opts);
  const a4Hz = checkNumber('a4Hz', opts.a4Hz ?? A4_HZ, 380, 500);
  const fit = fitTracking(points, {
    ...(fitFromVolts === undefined ? {} : { fromVolts: fitFromVolts }),
    ...(fitToVolts === undefined ? {} : { toVolts: fitToVolts }),
  });
  const inRange = points.filter(
    (p) => p.volts >= (fitFromVolts ?? -Infinity) && p.volts <= (fitToVolts ?? Infinity),
  );
  const bends: BendAnalysis = fit.kind === 'ok' ? analyzeBends(inRange) : fit;
  const advice = adviseTrim({
    fit,
    ...(bends.kind === 'ok' ? { bends } : {}),
    a4Hz,
    ...(network === undefined ? {} : { network }),
  });
  return { fit, bends, advice };
}

/**
 * The clock correction, applied once for every path: the frequency a step would have read with a perfect
 * clock, `rawHz·(1 + ppm·10⁻⁶)` (`dsp/io/clock.ts` applyClockPpm).
 *
 * @param rawHz - As measured, Hz, > 0.
 * @param clockPpm - The interface clock's error, ppm, within ±1000; 0 returns `rawHz` unchanged.
 * @example correctClock(440, 100) // 440.044
 */
export function correctClock(rawHz: Hertz, clockPpm: Ppm): Hertz {
  return clockPpm === 0 ? rawHz : applyClockPpm(rawHz, clockPpm);
}

/** A number JSON can hold (finite), else null. */
function finiteOrNull(v: number | null | undefined): number | null {
  return v !== null && v !== undefined && Number.isFinite(v) ? v : null;
}

function componentsJson(c: CapturedStep['components']): StepComponents | null {
  if (!c || !('estimatorCents' in c)) return null;
  return {
    estimatorCents: c.estimatorCents,
    repeatabilityCents: c.repeatabilityCents,
    settlingCents: c.settlingCents,
    dof: finiteOrNull(c.dof),
  };
}

function captureJson(c: StepCaptureInfo): StepCaptureInfo {
  return {
    source: c.source,
    startSeconds: finiteOrNull(c.startSeconds),
    endSeconds: finiteOrNull(c.endSeconds),
    windowStartSeconds: finiteOrNull(c.windowStartSeconds),
    windowEndSeconds: finiteOrNull(c.windowEndSeconds),
    harmonicsUsed: c.harmonicsUsed,
    clarity: finiteOrNull(c.clarity),
    rmsDbfs: finiteOrNull(c.rmsDbfs),
    peakDbfs: finiteOrNull(c.peakDbfs),
  };
}

function endJson(e: BendAnalysisOk['highEnd'] | undefined): ResultFit['highEnd'] {
  if (!e || e.kind === 'straight') return { kind: 'straight', centsAtEnd: null };
  return { kind: e.direction, centsAtEnd: e.centsAtEnd };
}

function adviceJson(advice: TrimAdvice | null): ResultAdvice[] {
  if (!advice) return [];
  const item = (a: AdviceItem): ResultAdvice => ({
    text: a.text,
    trimmer: a.trimmer,
    kind: 'trim',
    status: a.status,
    direction: a.direction,
    errorCents: finiteOrNull(a.errorCents),
    gainChangePercent: finiteOrNull(a.gainChangePercent),
    millivoltsAtInput: finiteOrNull(a.millivoltsAtInput),
    resistors:
      a.resistors === null ? null : a.resistors.map((r) => ({ ...r, e24: { ...r.e24 }, e96: { ...r.e96 } })),
    ...(a.uncertaintyCents === undefined ? {} : { uncertaintyCents: finiteOrNull(a.uncertaintyCents) }),
    ...(a.target === undefined ? {} : { target: a.target === null ? null : { ...a.target } }),
  });
  const words = (kind: 'next' | 'caution', text: string): ResultAdvice => ({
    text,
    trimmer: 'none',
    kind,
    status: null,
    direction: 'none',
    errorCents: null,
    gainChangePercent: null,
    millivoltsAtInput: null,
    resistors: null,
  });
  return [...advice.items.map(item), words('next', advice.next), words('caution', advice.caution)];
}

const NO_FIT: TrackingFitNone = { kind: 'none', reason: 'too-few-points' };

/**
 * Steps to result: applies the clock correction ({@link correctClock}), builds the error table
 * (`dsp/calibration/table.ts`), fits the tracking line with its bends and gives the trim advice ({@link fitAndAdvise}),
 * and writes the one result ({@link CalibrationResult}). Steps without a voltage (a single tone) get their
 * note only: no table, fit or advice.
 *
 * @param steps - Captured steps in plan order (see {@link CapturedStep}).
 * @param opts - Tuning reference, clock correction, fit range and network.
 * @throws RangeError for an option out of range or a step that is not a measurement, naming it.
 * @example
 * calibrate([{ index: 0, volts: 0, measuredVolts: null, rawHz: 55, uncertaintyCents: 0.01 },
 *            { index: 1, volts: 1, measuredVolts: null, rawHz: 110.1, uncertaintyCents: 0.01 }]).result.fit
 * // { octavesPerVolt: 1.0013…, scaleErrorCentsPerOctave: 1.57…, … }
 */
export function calibrate(steps: readonly CapturedStep[], opts: CalibrateOptions = {}): Calibration {
  const a4Hz = checkNumber('a4Hz', opts.a4Hz ?? A4_HZ, 380, 500);
  const clockPpm = checkNumber('clockPpm', opts.clockPpm ?? 0, -MAX_CLOCK_PPM, MAX_CLOCK_PPM);
  const calibration = checkCalibrationOptions(opts);
  steps.forEach((s, i) => {
    checkNumber(`steps[${i}].rawHz`, s.rawHz, Number.MIN_VALUE, Infinity);
    checkNumber(`steps[${i}].uncertaintyCents`, s.uncertaintyCents, 0, Infinity);
    if (s.volts !== null) checkNumber(`steps[${i}].volts`, s.volts, -MAX_VOLTS, MAX_VOLTS);
    if (s.measuredVolts !== null)
      checkNumber(`steps[${i}].measuredVolts`, s.measuredVolts, -MAX_VOLTS, MAX_VOLTS);
  });
  // ---- The clock correction: here, once. ----
  const hz = steps.map((s) => correctClock(s.rawHz, clockPpm));

  const withVolts = steps.every((s) => s.volts !== null);
  const built =
    withVolts && steps.length > 0
      ? buildErrorTable(
          steps.map((s, i) => ({
            nominalVolts: s.volts as Volts,
            ...(s.measuredVolts === null ? {} : { measuredVolts: s.measuredVolts }),
            hz: hz[i],
            uncertaintyCents: s.uncertaintyCents,
          })),
          { a4Hz },
        )
      : null;
  const table = built?.kind === 'ok' ? built : null;
  const rows: readonly TableRow[] | null = table ? table.rows : null;
  const done = rows
    ? fitAndAdvise(
        rows.map((r) => ({ volts: r.volts, hz: r.hz, uncertaintyCents: r.uncertaintyCents })),
        { ...calibration, a4Hz },
      )
    : null;
  // ---- The one model behind every figure (dsp/model/model.ts via dsp/calibration/assessment.ts). ----
  const assessment = rows
    ? assessSteps(
        steps.map((s, i) => ({
          nominalVolts: s.volts as Volts,
          measuredVolts: s.measuredVolts,
          hz: hz[i],
          uncertaintyCents: s.uncertaintyCents,
          ...(s.components && 'estimatorCents' in s.components
            ? { components: { ...s.components, dof: s.components.dof ?? Infinity } }
            : {}),
        })),
        {
          ...calibration,
          a4Hz,
          ...(opts.budget === undefined ? {} : { budget: opts.budget }),
          ...(opts.toleranceCents === undefined ? {} : { toleranceCents: opts.toleranceCents }),
          ...(opts.offsetTarget === undefined ? {} : { offsetTarget: opts.offsetTarget }),
        },
      )
    : null;
  const model = assessment?.model.kind === 'ok' ? assessment.model : null;
  const fit: TrackingFit = model ? modelAsTrackingFit(model) : done ? done.fit : NO_FIT;
  const bends = done ? done.bends : NO_FIT;
  // Without a table (no steps yet) the advice is still the typed "capture more steps".
  const advice: TrimAdvice | null =
    assessment?.advice ?? (done ? done.advice : withVolts ? adviseTrim({ fit: NO_FIT, a4Hz }) : null);
  const fitOk = fit.kind === 'ok' ? fit : null;
  const bendsOk = bends.kind === 'ok' ? bends : null;
  const modelAdvice = assessment?.advice ?? null;
  const inVoltRange = (v: number) => Math.abs(v) <= MAX_VOLTS;
  const topEnd = (): ResultFit['highEnd'] => {
    if (!model || model.terms.hf === 'none') return { kind: 'straight', centsAtEnd: null };
    const c = hfCents(model, modelHz(model, model.toVolts)) - hfCents(model, modelHz(model, model.fromVolts));
    return { kind: c < 0 ? 'flat' : 'sharp', centsAtEnd: c };
  };
  const bottomEnd = (): ResultFit['lowEnd'] => {
    if (!model || !model.terms.lowEnd) return { kind: 'straight', centsAtEnd: null };
    const c = lowEndCents(model, modelHz(model, model.fromVolts));
    return { kind: c < 0 ? 'flat' : 'sharp', centsAtEnd: c };
  };

  const result: CalibrationResult = {
    schemaVersion: RESULT_SCHEMA_VERSION,
    a4Hz,
    clockPpm,
    fitFromVolts: calibration.fitFromVolts ?? null,
    fitToVolts: calibration.fitToVolts ?? null,
    ...(calibration.scalePivotVolts === undefined ? {} : { scalePivotVolts: calibration.scalePivotVolts }),
    steps: steps.map((s, i): ResultStep => {
      const row = rows ? rows[i] : null;
      const note = nearestNote(hz[i], a4Hz);
      return {
        index: s.index,
        volts: s.volts,
        measuredVolts: s.measuredVolts,
        hz: hz[i],
        uncertaintyCents: s.uncertaintyCents,
        note: note.name,
        noteHz: note.noteHz,
        centsFromNote: note.cents,
        centsFromIdeal: finiteOrNull(row?.centsFromIdeal),
        centsFromIdealUncertainty: finiteOrNull(row?.centsFromIdealUncertainty),
        intervalErrorCents: finiteOrNull(row?.intervalErrorCents),
        intervalUncertaintyCents: finiteOrNull(row?.intervalUncertaintyCents),
        flags: [...new Set([...(s.flags ?? []), ...(assessment?.flags[i] ?? [])])],
        components: componentsJson(s.components),
        likelyVolts:
          assessment?.likelyVolts[i] != null && inVoltRange(assessment.likelyVolts[i] as number)
            ? (assessment.likelyVolts[i] as number)
            : (s.likelyVolts ?? null),
        budget: assessment ? budgetToJson(assessment.stepBudgets[i]) : (s.budget ?? null),
        capture: s.capture ? captureJson(s.capture) : null,
      };
    }),
    fit: fitOk
      ? {
          octavesPerVolt: fitOk.octavesPerVolt,
          scaleErrorCentsPerOctave: fitOk.scaleErrorCentsPerOctave,
          hzAt0V: fitOk.hzAt0V,
          maxResidualCents: fitOk.maxAbsResidualCents,
          octavesPerVoltStdErr: fitOk.octavesPerVoltStdErr,
          scaleErrorStdErrCents: fitOk.scaleErrorStdErrCents,
          hzAt0VStdErrCents: fitOk.hzAt0VStdErrCents,
          residualsCents: [...fitOk.residualsCents],
          fromVolts: fitOk.fromVolts,
          toVolts: fitOk.toVolts,
          chiSquaredPerDof: finiteOrNull(fitOk.chiSquaredPerDof),
          middleScaleErrorCentsPerOctave: model
            ? model.scaleErrorCentsPerOctave
            : bendsOk
              ? bendsOk.scaleErrorCentsPerOctave
              : null,
          highEnd: model ? topEnd() : endJson(bendsOk?.highEnd),
          lowEnd: model ? bottomEnd() : endJson(bendsOk?.lowEnd),
          model: model
            ? {
                hfTerm: model.terms.hf,
                lowEndTerm: model.terms.lowEnd,
                criterion: model.criterion,
                equivalentResetSeconds: finiteOrNull(model.equivalentResetSeconds),
                equivalentResetSecondsStdErr: finiteOrNull(model.equivalentResetSecondsStdErr),
                mixtureResolved: model.mixtureResolved,
                resetSeconds: model.parameters.resetSeconds,
                bulkAlphaSeconds: model.parameters.bulkAlphaSeconds,
                lowEndHz: model.parameters.lowEndHz,
                suspectSteps: model.suspects.map((x) => steps[x.index].index),
              }
            : null,
          straightLine: model?.straightLine
            ? {
                octavesPerVolt: model.straightLine.octavesPerVolt,
                scaleErrorCentsPerOctave: model.straightLine.scaleErrorCentsPerOctave,
                hzAt0V: model.straightLine.hzAt0V,
                maxResidualCents: model.straightLine.maxAbsResidualCents,
              }
            : null,
          scaleBudget: modelAdvice ? budgetToJson(modelAdvice.budgets.scale) : null,
          pitchAt0VBudget: modelAdvice ? budgetToJson(modelAdvice.budgets.pitchAt0V) : null,
          tolerance: modelAdvice
            ? {
                toleranceCents: modelAdvice.tolerance.toleranceCents,
                verdict: modelAdvice.tolerance.verdict,
                text: modelAdvice.tolerance.text,
              }
            : null,
          refusal: assessment?.refusal
            ? { reason: assessment.refusal.reason, message: assessment.refusal.message }
            : null,
        }
      : null,
    advice: adviceJson(advice),
  };
  return { result, table, fit, bends, advice, assessment };
}

/** The reading figures of a live capture the run state does not keep (the engine keeps them beside it). */
export interface CaptureQuality {
  readonly clarity: number;
  readonly rmsDbfs: number;
  readonly peakDbfs: number;
  readonly windowSeconds: number;
  readonly harmonicsUsed: number;
}

/**
 * The captured steps of a live run (`dsp/calibration/run.ts`) in plan order, as {@link calibrate} takes them: the
 * frequency as captured (no clock correction), the meter reading where entered, and the capture window.
 * Flags, uncertainty components and a likely voltage are carried when the capture has them.
 *
 * @param state - A run.
 * @param quality - Reading figures of each capture, by step index, when known.
 * @example calibrate(runSteps(state), { clockPpm: 12 }).result.steps.length // captured steps
 */
export function runSteps(
  state: RunState,
  quality: Readonly<Record<number, CaptureQuality>> = {},
): CapturedStep[] {
  const out: CapturedStep[] = [];
  for (const st of state.steps) {
    const c = st.capture;
    if (!c) continue;
    const q = quality[st.index];
    const extra = c as Partial<Pick<CapturedStep, 'flags' | 'components' | 'likelyVolts'>>;
    out.push({
      index: st.index,
      volts: st.nominalVolts,
      measuredVolts: st.measuredVolts,
      rawHz: c.hz,
      uncertaintyCents: c.uncertaintyCents,
      ...(extra.flags === undefined ? {} : { flags: extra.flags }),
      ...(extra.components === undefined ? {} : { components: extra.components }),
      ...(extra.likelyVolts === undefined ? {} : { likelyVolts: extra.likelyVolts }),
      capture: {
        source: c.source,
        startSeconds: c.startSeconds,
        endSeconds: c.endSeconds,
        windowStartSeconds: c.startSeconds,
        windowEndSeconds: c.endSeconds,
        harmonicsUsed: q && Number.isInteger(q.harmonicsUsed) ? q.harmonicsUsed : null,
        clarity: finiteOrNull(q?.clarity),
        rmsDbfs: finiteOrNull(q?.rmsDbfs),
        peakDbfs: finiteOrNull(q?.peakDbfs),
      },
    });
  }
  return out;
}
