/**
 * The model-and-budget half of the calibration pipeline in one call: from measured steps (clock-corrected Hz,
 * voltages, uncertainties and, where the engine gives them, their components) to the calibration model
 * (`dsp/model/model.ts`), the suspect-voltage flags, each step's uncertainty budget, the budgets of the scale and
 * the 0 V pitch, the tolerance verdict and the advice (`dsp/advice/advice.ts` adviseFromModel). Every figure a
 * result shows comes from this one model.
 */
import { adviseFromModel, type InputNetwork, type ModelAdvice } from '../advice/index.ts';
import {
  stepBudget,
  stepFitUncertaintyCents,
  type BudgetContribution,
  type BudgetOptions,
  type BudgetStep,
  type UncertaintyBudget,
} from '../model/index.ts';
import type { TrackingFitOk } from '../model/index.ts';
import {
  fitCalibrationModel,
  type CalibrationModel,
  type CalibrationModelOk,
  type ModelRefusal,
} from '../model/index.ts';
import type { Celsius, Cents, Hertz, Volts } from '../math/index.ts';

/** Options of {@link assessSteps}. */
export interface AssessOptions {
  /** Fit range, V (inclusive). Default: every step. */
  readonly fitFromVolts?: Volts;
  readonly fitToVolts?: Volts;
  /** Input network, for resistor values. */
  readonly network?: InputNetwork;
  /** Tuning reference, Hz. Default 440. */
  readonly a4Hz?: Hertz;
  /** Meter, source, clock and temperature for the budgets. */
  readonly budget?: BudgetOptions;
  /** Tolerance over the range in use, cents. Default 1. */
  readonly toleranceCents?: Cents;
  /** The pitch the unit should play at a voltage. Default: the nearest note at the lowest step used. */
  readonly offsetTarget?: { readonly volts: Volts; readonly hz: Hertz };
  /** Converter temperature for the base-voltage figures, °C. Default 25. */
  readonly tempC?: Celsius;
  /** Tolerance of a replacement resistor, %. Default 1. */
  readonly resistorTolerancePercent?: number;
  /** The voltage the scale trimmer turns about, V, when known. Default: unknown. */
  readonly scalePivotVolts?: Volts;
}

/** What {@link assessSteps} returns. */
export interface Assessment {
  /** The calibration model (or the typed "none"). */
  readonly model: CalibrationModel;
  /** The advice with its budgets and tolerance verdict; null without a model. */
  readonly advice: ModelAdvice | null;
  /** Set when the steps fail a plausibility gate. */
  readonly refusal: ModelRefusal | null;
  /** Per step, in input order: `['suspect-voltage']` for a step left out as a wrong voltage, else empty. */
  readonly flags: readonly (readonly 'suspect-voltage'[])[];
  /** Per step: the voltage a suspect step's pitch corresponds to, V, else null. */
  readonly likelyVolts: readonly (Volts | null)[];
  /** Per step: the budget of its pitch at its voltage (value: its error against the target line when advised). */
  readonly stepBudgets: readonly UncertaintyBudget[];
}

/**
 * Fits the model to the steps (weights from each step's independent uncertainty parts, `stepFitUncertaintyCents`),
 * flags suspect voltages, and builds the budgets, tolerance verdict and advice.
 *
 * @param steps - Steps in input order (nominal and measured volts, clock-corrected Hz, uncertainty, components).
 * @param opts - Range, network, tuning reference, budget options, tolerance, target.
 * @throws RangeError for invalid steps or options, naming the field.
 * @example assessSteps(steps, { toleranceCents: 0.5 }).advice?.tolerance.verdict // 'cannot-tell'
 */
export function assessSteps(steps: readonly BudgetStep[], opts: AssessOptions = {}): Assessment {
  const budget = opts.budget ?? {};
  const points = steps.map((s) => ({
    volts: s.measuredVolts ?? s.nominalVolts,
    hz: s.hz,
    uncertaintyCents: stepFitUncertaintyCents(s, budget),
  }));
  const model = fitCalibrationModel(points, {
    straightLineUncertaintyCents: steps.map((s) => s.uncertaintyCents),
    ...(opts.fitFromVolts === undefined ? {} : { fromVolts: opts.fitFromVolts }),
    ...(opts.fitToVolts === undefined ? {} : { toVolts: opts.fitToVolts }),
  });
  const flags = steps.map(() => [] as 'suspect-voltage'[]);
  const likelyVolts: (Volts | null)[] = steps.map(() => null);
  if (model.kind !== 'ok') {
    return {
      model,
      advice: null,
      refusal: null,
      flags,
      likelyVolts,
      stepBudgets: steps.map((s) => stepBudget(s, budget)),
    };
  }
  for (const s of model.suspects) {
    flags[s.index] = ['suspect-voltage'];
    likelyVolts[s.index] = s.likelyVolts;
  }
  const advice = adviseFromModel({
    model,
    steps,
    budget,
    ...(opts.toleranceCents === undefined ? {} : { toleranceCents: opts.toleranceCents }),
    ...(opts.offsetTarget === undefined ? {} : { offsetTarget: opts.offsetTarget }),
    ...(opts.a4Hz === undefined ? {} : { a4Hz: opts.a4Hz }),
    ...(opts.tempC === undefined ? {} : { tempC: opts.tempC }),
    ...(opts.network === undefined ? {} : { network: opts.network }),
    ...(opts.resistorTolerancePercent === undefined
      ? {}
      : { resistorTolerancePercent: opts.resistorTolerancePercent }),
    ...(opts.scalePivotVolts === undefined ? {} : { scalePivotVolts: opts.scalePivotVolts }),
  });
  return { model, advice, refusal: advice.refusal, flags, likelyVolts, stepBudgets: advice.stepBudgets };
}

/** A budget as JSON holds it: the shape of the result's budget (terms in cents, dof null when infinite). */
export interface BudgetJson {
  terms: { source: string; type: 'A' | 'B'; standardCents: number; dof: number | null }[];
  combinedCents: number;
  coverageFactor: number;
  expandedCents: number;
}

const TYPE_A: ReadonlySet<BudgetContribution['source']> = new Set(['estimator', 'repeatability', 'scatter']);

/**
 * A budget in the result's JSON shape: Type A for contributions evaluated from the readings (estimator,
 * repeatability, scatter about the model), Type B for the rest (JCGM 100:2008 §4.2, §4.3); infinite degrees of
 * freedom as null.
 *
 * @param b - A budget.
 * @example budgetToJson(stepBudget(step)).terms[0] // { source: 'estimator', type: 'A', standardCents: 0.01, dof: null }
 */
export function budgetToJson(b: UncertaintyBudget): BudgetJson {
  const fin = (x: number) => (Number.isFinite(x) ? x : null);
  return {
    terms: b.contributions.map((c) => ({
      source: c.source,
      type: TYPE_A.has(c.source) ? 'A' : 'B',
      standardCents: c.standardUncertainty,
      dof: fin(c.dof),
    })),
    combinedCents: b.combinedStandard,
    coverageFactor: b.coverageFactor,
    expandedCents: b.expanded,
  };
}

/**
 * The model in the shape of a straight-line fit (`dsp/model/fit.ts` TrackingFitOk), so that every view that draws
 * a fit shows the model's figures: its scale and standard error, the 0 V pitch of the model, the residuals
 * of the steps it used about the model and the covariance of its line part (octave units).
 *
 * @param model - A fitted model.
 * @example modelAsTrackingFit(model).scaleErrorCentsPerOctave === model.scaleErrorCentsPerOctave // true
 */
export function modelAsTrackingFit(model: CalibrationModelOk): TrackingFitOk {
  const c2 = 1200 * 1200;
  const residuals = model.usedIndices.map((i) => model.residualsCents[i]);
  return {
    kind: 'ok',
    octavesPerVolt: model.octavesPerVolt,
    octavesPerVoltStdErr: model.scaleErrorStdErrCents / 1200,
    scaleErrorCentsPerOctave: model.scaleErrorCentsPerOctave,
    scaleErrorStdErrCents: model.scaleErrorStdErrCents,
    hzAt0V: model.hzAt0V,
    hzAt0VStdErrCents: model.hzAt0VStdErrCents,
    covariance: {
      intercept: model.lineCovariance.offset / c2,
      cross: model.lineCovariance.cross / c2,
      slope: model.lineCovariance.scale / c2,
    },
    usedIndices: model.usedIndices,
    residualsCents: residuals,
    maxAbsResidualCents: residuals.reduce((a, r) => Math.max(a, Math.abs(r)), 0),
    chiSquared: model.chiSquared,
    dof: model.dof,
    chiSquaredPerDof: model.dof > 0 ? model.chiSquared / model.dof : null,
    birgeRatio: model.birgeRatio,
    fromVolts: model.fromVolts,
    toVolts: model.toVolts,
  };
}
