/**
 * The uncertainty budget, in the manner of the GUM (JCGM 100:2008): for each step, for the scale, for the
 * 0 V pitch and for every advised amount, the named contributions, the combined standard uncertainty
 * (root-sum-square of uncorrelated inputs, GUM 5.1.2), the effective degrees of freedom (Welch–Satterthwaite,
 * GUM G.4.1) and the expanded uncertainty U = k·u_c with k from Student's t at 95.45 % (GUM G.3, Table G.2;
 * k = 2 when the degrees of freedom are many).
 *
 * Contributions:
 * - **estimator**: the pitch estimator's own standard uncertainty (per step, independent);
 * - **repeatability**: the oscillator's short-term wander over the capture (per step, Type A, its own dof);
 * - **settling**: residual creep inside the capture window (per step, Type B);
 * - **reference voltage**: for nominal volts the source's stated accuracy; for measured volts the meter's
 *   specification ±(% of reading + counts), rectangular (u = a/√3, GUM 4.3.7), plus half a count of
 *   resolution, rectangular (GUM F.2.2.1). The % of reading part is a gain error common to every step on
 *   the meter (fully correlated), the counts and resolution are independent per step;
 * - **clock**: the interface's clock, common to every absolute figure; intervals (and so the scale) are immune;
 * - **temperature**, when entered: the converter's scale temperature coefficient times the temperature
 *   spread during the run, rectangular, acting as a scale change about the reference voltage;
 * - **scatter about the model**: when the steps scatter about the fit more than their stated uncertainties
 *   allow (Birge ratio B > 1), the excess, `√(B² − 1)` times the propagated step uncertainty, Type A with
 *   the fit's degrees of freedom.
 *
 * Fit-derived figures propagate each per-step contribution through the model's sensitivity coefficients
 * (`dsp/model/model.ts`, GUM 5.1.3); correlated contributions (the meter's gain, the clock, temperature) are
 * propagated as one common shift, independent ones in quadrature.
 */
import { ppmToCents } from '../io/index.ts';
import { predictionSensitivities, scaleSensitivities, type CalibrationModelOk } from './model.ts';
import { scaleTempcoPpmPerKelvin } from '../converter/index.ts';
import { coverageFactor, welchSatterthwaite } from '../math/index.ts';
import type { Celsius, Cents, Hertz, Ppm, Volts } from '../math/index.ts';

const CENTS_PER_OCTAVE = 1200;
const SQRT3 = Math.sqrt(3);

/**
 * A voltmeter's accuracy specification, ±(percentOfReading % of the reading + counts × resolution).
 * `countMax` sets the auto-ranging resolution (1999 for 3½ digits); `resolutionVolts`, when given,
 * fixes it instead.
 */
export interface MeterSpec {
  /** Name shown in the budget. */
  readonly label: string;
  /** % of reading, ≥ 0. */
  readonly percentOfReading: number;
  /** Counts of the last digit, ≥ 0. */
  readonly counts: number;
  /** Largest count the display shows (1999, 19 999, 199 999), ≥ 9. */
  readonly countMax: number;
  /** Fixed resolution, V, > 0 (a meter left on one range); default: auto-ranged from `countMax`. */
  readonly resolutionVolts?: Volts;
}

/**
 * Meter presets: typical handheld and bench specifications for DC volts (common practice, no source; the
 * 3½- and 4½-digit figures are the ones docs/facts.md works through). A custom {@link MeterSpec} can be given instead.
 */
export const METER_PRESETS: Readonly<Record<'3.5-digit' | '4.5-digit' | '5.5-digit', MeterSpec>> =
  Object.freeze({
    '3.5-digit': {
      label: '3½-digit meter, ±(0.5 % + 2 counts)',
      percentOfReading: 0.5,
      counts: 2,
      countMax: 1999,
    },
    '4.5-digit': {
      label: '4½-digit meter, ±(0.05 % + 3 counts)',
      percentOfReading: 0.05,
      counts: 3,
      countMax: 19999,
    },
    '5.5-digit': {
      label: '5½-digit meter, ±(0.005 % + 2 counts)',
      percentOfReading: 0.005,
      counts: 2,
      countMax: 199999,
    },
  });

/** Names of {@link METER_PRESETS}. */
export type MeterPresetName = keyof typeof METER_PRESETS;

/** Accuracy of the source that set nominal voltages: ±(percentOfReading % + offsetVolts). */
export interface SourceSpec {
  /** % of the voltage, ≥ 0. Default 0.1 (reference voltages to about 0.1 %, docs/facts.md, common practice). */
  readonly percentOfReading: number;
  /** Fixed part, V, ≥ 0. Default 0. */
  readonly offsetVolts: Volts;
}

/** The default source accuracy: 0.1 % (common practice, docs/facts.md). */
export const DEFAULT_SOURCE: SourceSpec = Object.freeze({ percentOfReading: 0.1, offsetVolts: 0 });

/** Standard uncertainty of the interface clock when it was not measured, ppm: ±50 ppm rectangular (consumer crystals are ±20 to ±100 ppm, docs/facts.md, common practice). */
export const DEFAULT_CLOCK_UNCERTAINTY_PPM: Ppm = 50 / SQRT3;

/** Temperature during the run, for the temperature contribution. */
export interface TemperatureInput {
  /** Converter (or room) temperature, °C, −40…100. */
  readonly celsius: Celsius;
  /** Half-width of the temperature's spread during the run, K, ≥ 0 (rectangular). */
  readonly halfWidthKelvin: number;
  /**
   * The unit's scale temperature coefficient, ppm/K, ≥ 0. Default: an uncompensated converter's 1/T
   * (3354 ppm/K at 25 °C, derived in `dsp/converter/physics.ts`), an upper bound; a tempco-compensated unit is far lower.
   */
  readonly scaleTempcoPpmPerKelvin?: number;
}

/** Settings that shape the budget. */
export interface BudgetOptions {
  /** Meter used for measured volts. Default: the 4½-digit preset. */
  readonly meter?: MeterSpec;
  /** Source accuracy for nominal volts. Default {@link DEFAULT_SOURCE}. */
  readonly source?: SourceSpec;
  /** Standard uncertainty of the clock, ppm, ≥ 0. Default {@link DEFAULT_CLOCK_UNCERTAINTY_PPM}. */
  readonly clockUncertaintyPpm?: Ppm;
  /** Temperature, when entered. */
  readonly temperature?: TemperatureInput;
  /** Voltage the scale pivots about for the temperature term and the offset, V. Default: the lowest step. */
  readonly referenceVolts?: Volts;
}

/** The three per-step parts the pitch engine reports (contract with the engine), cents, and the Type A dof. */
export interface StepComponents {
  readonly estimatorCents: Cents;
  readonly repeatabilityCents: Cents;
  readonly settlingCents: Cents;
  /** Effective dof of the Type A (repeatability) part; Infinity if unknown. */
  readonly dof: number;
}

/** One step as the budget needs it. */
export interface BudgetStep {
  /** Voltage given for the step, V (nominal). */
  readonly nominalVolts: Volts;
  /** Meter reading at the jack, V, or null when the nominal value was used. */
  readonly measuredVolts: Volts | null;
  readonly hz: Hertz;
  /** Standard uncertainty of the reading, cents (the root-sum-square of the components when they exist). */
  readonly uncertaintyCents: Cents;
  /** The engine's components; absent in older records (then all of `uncertaintyCents` is the estimator's). */
  readonly components?: StepComponents;
}

/** Where a contribution comes from. */
export type BudgetSource =
  | 'estimator'
  | 'repeatability'
  | 'settling'
  | 'reference-voltage'
  | 'meter-resolution'
  | 'clock'
  | 'temperature'
  | 'scatter';

/** Plain names of the contributions, for people: what the advice, the report and the exports say. */
export const BUDGET_SOURCE_NAMES: Readonly<Record<BudgetSource, string>> = {
  estimator: 'pitch estimator',
  repeatability: 'oscillator repeatability',
  settling: 'settling residual',
  'reference-voltage': 'reference voltage',
  'meter-resolution': 'meter resolution',
  clock: 'interface clock',
  temperature: 'temperature',
  scatter: 'scatter about the model',
};

/**
 * The plain name of a contribution (its code when the name is not known, as for a record from a later version).
 *
 * @param source - A contribution's code.
 * @example budgetSourceName('reference-voltage') // 'reference voltage'
 */
export function budgetSourceName(source: string): string {
  return (BUDGET_SOURCE_NAMES as Readonly<Record<string, string>>)[source] ?? source;
}

/** One line of a budget. */
export interface BudgetContribution {
  readonly source: BudgetSource;
  /** Plain-language name of the contribution. */
  readonly label: string;
  /** Contribution to the standard uncertainty of the quantity (already times its sensitivity), in the quantity's unit. */
  readonly standardUncertainty: number;
  /** Degrees of freedom; Infinity for Type B estimates taken as exact. */
  readonly dof: number;
  readonly distribution: 'normal' | 'rectangular';
}

/** A GUM budget for one quantity. */
export interface UncertaintyBudget {
  /** What is measured, in words. */
  readonly quantity: string;
  readonly unit: 'cents' | 'cents per octave';
  /** The estimate. */
  readonly value: number;
  readonly contributions: readonly BudgetContribution[];
  /** Root-sum-square of the contributions. */
  readonly combinedStandard: number;
  /** Welch–Satterthwaite ν_eff (Infinity when every contribution is Type B). */
  readonly effectiveDof: number;
  /** k = t₉₅.₄₅(ν_eff), 2 for large ν. */
  readonly coverageFactor: number;
  /** U = k·u_c. */
  readonly expanded: number;
  /** The contribution with the largest share. */
  readonly dominant: BudgetSource | null;
}

function checkNonNeg(name: string, v: number): void {
  if (!Number.isFinite(v) || v < 0)
    throw new RangeError(`${name} must be a finite number at least 0, got ${v}`);
}

/**
 * Checks a meter specification, throwing a RangeError naming the bad field.
 *
 * @example validateMeterSpec(METER_PRESETS['4.5-digit']) // no throw
 */
export function validateMeterSpec(m: MeterSpec): void {
  checkNonNeg('meter.percentOfReading', m.percentOfReading);
  if (m.percentOfReading > 10)
    throw new RangeError(`meter.percentOfReading must be at most 10, got ${m.percentOfReading}`);
  checkNonNeg('meter.counts', m.counts);
  if (!Number.isInteger(m.countMax) || m.countMax < 9)
    throw new RangeError(`meter.countMax must be an integer at least 9, got ${m.countMax}`);
  if (m.resolutionVolts !== undefined && !(m.resolutionVolts > 0 && Number.isFinite(m.resolutionVolts)))
    throw new RangeError(
      `meter.resolutionVolts must be a finite number greater than 0, got ${m.resolutionVolts}`,
    );
}

/**
 * Resolution of an auto-ranging meter at a reading: the smallest range R = 2·10^k (scaled for the count
 * maximum, 200 mV at the least) that holds |V|, divided by the number of counts, `R/(countMax + 1)`. A 4½-digit (19 999-count)
 * meter reads 1 V on its 2 V range with 0.1 mV resolution.
 *
 * @param meter - The meter.
 * @param volts - Reading, V, finite.
 * @returns Resolution, V.
 * @example meterResolutionVolts(METER_PRESETS['4.5-digit'], 1) // 0.0001
 */
export function meterResolutionVolts(meter: MeterSpec, volts: Volts): Volts {
  validateMeterSpec(meter);
  if (!Number.isFinite(volts)) throw new RangeError(`volts must be a finite number, got ${volts}`);
  if (meter.resolutionVolts !== undefined) return meter.resolutionVolts;
  // Smallest resolution 10^k with |V| ≤ countMax·10^k, no finer than the lowest (200 mV class) range gives.
  const finest = Math.ceil(Math.log10(0.2 / (meter.countMax + 1)) - 1e-9);
  let k = Math.ceil(Math.log10(Math.max(Math.abs(volts), 1e-12) / meter.countMax) - 1e-9);
  if (Math.abs(volts) > meter.countMax * Math.pow(10, k) * (1 + 1e-12)) k += 1;
  return Number(Math.pow(10, Math.max(k, finest)).toPrecision(12));
}

/**
 * Half-width of a meter's accuracy at a reading: `a = p/100·|V| + counts·resolution` (the specification
 * form ±(% of reading + counts), docs/facts.md). ±(0.05 % + 3) on 1.0000 V at 0.1 mV is 0.8 mV.
 *
 * @param meter - The meter.
 * @param volts - Reading, V, finite.
 * @returns `{ halfWidthVolts, gainPartVolts, countsPartVolts, resolutionVolts }`.
 * @example meterHalfWidth(METER_PRESETS['4.5-digit'], 1).halfWidthVolts // 0.0008
 */
export function meterHalfWidth(
  meter: MeterSpec,
  volts: Volts,
): { halfWidthVolts: Volts; gainPartVolts: Volts; countsPartVolts: Volts; resolutionVolts: Volts } {
  const res = meterResolutionVolts(meter, volts);
  const gain = (meter.percentOfReading / 100) * Math.abs(volts);
  const cnt = meter.counts * res;
  return { halfWidthVolts: gain + cnt, gainPartVolts: gain, countsPartVolts: cnt, resolutionVolts: res };
}

/** Standard uncertainties of one step's voltage, V: the correlated (gain) part, the independent part and resolution. */
export interface VoltageUncertainty {
  /** Whole specification as one rectangular distribution, a/√3 (the step's own figure). */
  readonly specVolts: Volts;
  /** Its % of reading part alone, a_gain/√3: common to every step read on the same meter or source. */
  readonly gainVolts: Volts;
  /** Its fixed part alone (counts or offset), a_fixed/√3: independent per step. */
  readonly fixedVolts: Volts;
  /** Half a count of resolution, rectangular: (res/2)/√3; 0 for a source. */
  readonly resolutionVolts: Volts;
  /** Where it comes from. */
  readonly label: string;
}

/**
 * Standard uncertainty of a step's voltage (GUM 4.3.7: a rectangular distribution of half-width a has
 * u = a/√3). Measured volts take the meter; nominal volts take the source's stated accuracy.
 *
 * @param step - The step (only `nominalVolts` and `measuredVolts` are used).
 * @param opts - Meter and source.
 * @example voltageUncertainty({ nominalVolts: 1, measuredVolts: 1, hz: 1, uncertaintyCents: 0 }, {}).specVolts // 0.000 461 88…
 */
export function voltageUncertainty(
  step: Pick<BudgetStep, 'nominalVolts' | 'measuredVolts'>,
  opts: BudgetOptions,
): VoltageUncertainty {
  if (step.measuredVolts !== null) {
    const meter = opts.meter ?? METER_PRESETS['4.5-digit'];
    const h = meterHalfWidth(meter, step.measuredVolts);
    return {
      specVolts: h.halfWidthVolts / SQRT3,
      gainVolts: h.gainPartVolts / SQRT3,
      fixedVolts: h.countsPartVolts / SQRT3,
      resolutionVolts: h.resolutionVolts / 2 / SQRT3,
      label: meter.label,
    };
  }
  const src = opts.source ?? DEFAULT_SOURCE;
  checkNonNeg('source.percentOfReading', src.percentOfReading);
  checkNonNeg('source.offsetVolts', src.offsetVolts);
  const gain = (src.percentOfReading / 100) * Math.abs(step.nominalVolts);
  return {
    specVolts: (gain + src.offsetVolts) / SQRT3,
    gainVolts: gain / SQRT3,
    fixedVolts: src.offsetVolts / SQRT3,
    resolutionVolts: 0,
    label: `source accuracy ±(${src.percentOfReading} %${src.offsetVolts > 0 ? ` + ${src.offsetVolts * 1000} mV` : ''}), nominal volts`,
  };
}

function componentsOf(step: BudgetStep): StepComponents {
  return (
    step.components ?? {
      estimatorCents: step.uncertaintyCents,
      repeatabilityCents: 0,
      settlingCents: 0,
      dof: Infinity,
    }
  );
}

/**
 * The standard uncertainty a step carries into the fit, cents: its independent parts only (estimator,
 * repeatability, settling, the voltage's fixed part and resolution at 1200 cents per volt). The meter's
 * gain part is common to every step and shows in the scale, not as scatter, so it is left out of the weights.
 *
 * @param step - The step.
 * @param opts - Meter and source.
 * @example stepFitUncertaintyCents({ nominalVolts: 1, measuredVolts: null, hz: 110, uncertaintyCents: 0.01 }, {}) // 0.01
 */
export function stepFitUncertaintyCents(step: BudgetStep, opts: BudgetOptions = {}): Cents {
  const c = componentsOf(step);
  const v = voltageUncertainty(step, opts);
  const vc = CENTS_PER_OCTAVE * Math.hypot(v.fixedVolts, v.resolutionVolts);
  return Math.sqrt(c.estimatorCents ** 2 + c.repeatabilityCents ** 2 + c.settlingCents ** 2 + vc * vc);
}

/** Temperature scale term as a standard uncertainty of the scale, cents per octave (0 when not entered). */
function temperatureScaleCents(opts: BudgetOptions): Cents {
  const t = opts.temperature;
  if (t === undefined) return 0;
  if (!Number.isFinite(t.celsius) || t.celsius < -40 || t.celsius > 100)
    throw new RangeError(`temperature.celsius must be a finite number from −40 to 100, got ${t.celsius}`);
  checkNonNeg('temperature.halfWidthKelvin', t.halfWidthKelvin);
  const tc = t.scaleTempcoPpmPerKelvin ?? scaleTempcoPpmPerKelvin(t.celsius);
  checkNonNeg('temperature.scaleTempcoPpmPerKelvin', tc);
  return CENTS_PER_OCTAVE * tc * 1e-6 * (t.halfWidthKelvin / SQRT3);
}

function clockCents(opts: BudgetOptions): Cents {
  const u = opts.clockUncertaintyPpm ?? DEFAULT_CLOCK_UNCERTAINTY_PPM;
  checkNonNeg('clockUncertaintyPpm', u);
  return ppmToCents(u);
}

function finish(
  quantity: string,
  unit: UncertaintyBudget['unit'],
  value: number,
  raw: BudgetContribution[],
): UncertaintyBudget {
  // Contributions below a billionth of the largest are rounding residue (a sensitivity sum that is 0 in exact arithmetic).
  const largest = Math.max(0, ...raw.map((c) => c.standardUncertainty));
  const contributions = raw.filter(
    (c) => c.standardUncertainty > 1e-9 * largest && c.standardUncertainty > 0,
  );
  const combined = Math.sqrt(contributions.reduce((s, c) => s + c.standardUncertainty ** 2, 0));
  const nu = welchSatterthwaite(contributions.map((c) => ({ u: c.standardUncertainty, dof: c.dof })));
  const k = coverageFactor(nu);
  let dominant: BudgetSource | null = null;
  let most = 0;
  for (const c of contributions) {
    if (c.standardUncertainty > most) {
      most = c.standardUncertainty;
      dominant = c.source;
    }
  }
  return {
    quantity,
    unit,
    value,
    contributions,
    combinedStandard: combined,
    effectiveDof: nu,
    coverageFactor: k,
    expanded: k * combined,
    dominant,
  };
}

/**
 * Budget of one step's absolute pitch at its voltage, cents: estimator, repeatability, settling, the
 * reference voltage (whole specification, rectangular, at 1200 cents per volt), resolution, the clock and,
 * when entered, temperature (the scale term times the distance from the reference voltage).
 *
 * @param step - The step.
 * @param opts - Meter, source, clock, temperature.
 * @param value - The estimate the budget belongs to (e.g. the step's error), cents. Default 0.
 * @example
 * // A 1.0000 V meter reading on a 4½-digit meter, a perfect reading otherwise:
 * stepBudget({ nominalVolts: 1, measuredVolts: 1, hz: 65.4, uncertaintyCents: 0 }, { clockUncertaintyPpm: 0 })
 * // contributions: reference-voltage 0.554 cent, meter-resolution 0.035 cent; combinedStandard 0.555…
 */
export function stepBudget(step: BudgetStep, opts: BudgetOptions = {}, value = 0): UncertaintyBudget {
  const c = componentsOf(step);
  const v = voltageUncertainty(step, opts);
  const volts = step.measuredVolts ?? step.nominalVolts;
  const ref = opts.referenceVolts ?? 0;
  const lines: BudgetContribution[] = [
    {
      source: 'estimator',
      label: 'pitch estimator',
      standardUncertainty: c.estimatorCents,
      dof: Infinity,
      distribution: 'normal',
    },
    {
      source: 'repeatability',
      label: 'oscillator repeatability',
      standardUncertainty: c.repeatabilityCents,
      dof: c.dof > 0 ? c.dof : Infinity,
      distribution: 'normal',
    },
    {
      source: 'settling',
      label: 'settling residual',
      standardUncertainty: c.settlingCents,
      dof: Infinity,
      distribution: 'rectangular',
    },
    {
      source: 'reference-voltage',
      label: `reference voltage (${v.label})`,
      standardUncertainty: CENTS_PER_OCTAVE * v.specVolts,
      dof: Infinity,
      distribution: 'rectangular',
    },
    {
      source: 'meter-resolution',
      label: 'meter resolution (half a count)',
      standardUncertainty: CENTS_PER_OCTAVE * v.resolutionVolts,
      dof: Infinity,
      distribution: 'rectangular',
    },
    {
      source: 'clock',
      label: 'interface clock',
      standardUncertainty: clockCents(opts),
      dof: Infinity,
      distribution: 'rectangular',
    },
    {
      source: 'temperature',
      label: 'temperature',
      standardUncertainty: temperatureScaleCents(opts) * Math.abs(volts - ref),
      dof: Infinity,
      distribution: 'rectangular',
    },
  ];
  return finish(`pitch at ${volts} V`, 'cents', value, lines);
}

/**
 * Budget of a quantity the model derives from the steps, `q = Σ c_j·y_j` to first order (GUM 5.1.3), with
 * `c` the sensitivity coefficients to the used steps' cents (from `dsp/model/model.ts`). Independent per-step
 * parts add in quadrature (`√Σ c_j²u_j²`, with ν by Welch–Satterthwaite over the steps); the meter's gain
 * part adds as `Σ c_j·1200·V_j·u_rel`, the clock as `Σ c_j·u_clock` (zero for intervals and the scale),
 * temperature as `Σ c_j·(V_j − V_ref)·u_scale,T`; scatter beyond the stated uncertainties as
 * `√(B² − 1)·√Σ c_j²σ_j²` with the fit's dof.
 *
 * @param model - The fitted model.
 * @param steps - Every input step, in the order given to the model (so `usedIndices` index it).
 * @param sensitivities - One coefficient per used step, in the order of `usedIndices`.
 * @param quantity - Words for the quantity.
 * @param unit - Its unit.
 * @param value - Its estimate.
 * @param opts - Meter, source, clock, temperature, reference voltage.
 * @throws RangeError when the lengths disagree.
 * @example derivedBudget(model, steps, scaleSensitivities(model), 'scale error', 'cents per octave', model.scaleErrorCentsPerOctave, {})
 */
export function derivedBudget(
  model: CalibrationModelOk,
  steps: readonly BudgetStep[],
  sensitivities: readonly number[],
  quantity: string,
  unit: UncertaintyBudget['unit'],
  value: number,
  opts: BudgetOptions = {},
): UncertaintyBudget {
  if (sensitivities.length !== model.usedIndices.length) {
    throw new RangeError(
      `sensitivities must have one entry per used step (${model.usedIndices.length}), got ${sensitivities.length}`,
    );
  }
  const used = model.usedIndices.map((i) => {
    const s = steps[i];
    if (s === undefined)
      throw new RangeError(`steps must hold index ${i} of the model, got ${steps.length} steps`);
    return s;
  });
  const ref = opts.referenceVolts ?? Math.min(...used.map((s) => s.measuredVolts ?? s.nominalVolts));
  const quad = (
    pick: (s: BudgetStep, c: StepComponents, v: VoltageUncertainty) => number,
    dofOf: (c: StepComponents) => number,
  ) => {
    const terms = used.map((s, j) => {
      const c = componentsOf(s);
      return { u: Math.abs(sensitivities[j]) * pick(s, c, voltageUncertainty(s, opts)), dof: dofOf(c) };
    });
    const u = Math.sqrt(terms.reduce((a, t) => a + t.u * t.u, 0));
    return { u, dof: u > 0 ? welchSatterthwaite(terms) : Infinity };
  };
  const inf = () => Infinity;
  const est = quad((_, c) => c.estimatorCents, inf);
  const rep = quad(
    (_, c) => c.repeatabilityCents,
    (c) => (c.dof > 0 ? c.dof : Infinity),
  );
  const set = quad((_, c) => c.settlingCents, inf);
  const fixed = quad((_s, _c, v) => CENTS_PER_OCTAVE * v.fixedVolts, inf);
  const res = quad((_s, _c, v) => CENTS_PER_OCTAVE * v.resolutionVolts, inf);
  // Gain part: a relative error g common to all steps of one kind (meter or source) shifts step j by 1200·V_j·g.
  const gainOf = (measured: boolean) =>
    Math.abs(
      used.reduce((a, s, j) => {
        if ((s.measuredVolts !== null) !== measured) return a;
        const v = voltageUncertainty(s, opts);
        const volts = s.measuredVolts ?? s.nominalVolts;
        const rel = volts === 0 ? 0 : v.gainVolts / Math.abs(volts);
        return a + sensitivities[j] * CENTS_PER_OCTAVE * volts * rel;
      }, 0),
    );
  const gainU = Math.hypot(gainOf(true), gainOf(false));
  const sumC = sensitivities.reduce((a, c) => a + c, 0);
  const clockU = Math.abs(sumC) < 1e-9 ? 0 : Math.abs(sumC) * clockCents(opts);
  const tScale = temperatureScaleCents(opts);
  const tempU =
    tScale === 0
      ? 0
      : Math.abs(
          used.reduce((a, s, j) => a + sensitivities[j] * ((s.measuredVolts ?? s.nominalVolts) - ref), 0),
        ) * tScale;
  const sigma = quad((s) => stepFitUncertaintyCents(s, opts), inf);
  const scatter = model.birgeRatio > 1 ? Math.sqrt(model.birgeRatio ** 2 - 1) * sigma.u : 0;
  const kinds = [...new Set(used.map((s) => voltageUncertainty(s, opts).label))].join('; ');
  return finish(quantity, unit, value, [
    {
      source: 'estimator',
      label: 'pitch estimator',
      standardUncertainty: est.u,
      dof: est.dof,
      distribution: 'normal',
    },
    {
      source: 'repeatability',
      label: 'oscillator repeatability',
      standardUncertainty: rep.u,
      dof: rep.dof,
      distribution: 'normal',
    },
    {
      source: 'settling',
      label: 'settling residual',
      standardUncertainty: set.u,
      dof: set.dof,
      distribution: 'rectangular',
    },
    {
      source: 'reference-voltage',
      label: `reference voltage (${kinds})`,
      standardUncertainty: Math.hypot(fixed.u, gainU),
      dof: Infinity,
      distribution: 'rectangular',
    },
    {
      source: 'meter-resolution',
      label: 'meter resolution (half a count)',
      standardUncertainty: res.u,
      dof: Infinity,
      distribution: 'rectangular',
    },
    {
      source: 'clock',
      label: 'interface clock',
      standardUncertainty: clockU,
      dof: Infinity,
      distribution: 'rectangular',
    },
    {
      source: 'temperature',
      label: 'temperature',
      standardUncertainty: tempU,
      dof: Infinity,
      distribution: 'rectangular',
    },
    {
      source: 'scatter',
      label: 'scatter of the steps about the model beyond their stated uncertainties',
      standardUncertainty: scatter,
      dof: Math.max(1, model.dof),
      distribution: 'normal',
    },
  ]);
}

/** The budgets of the model's headline figures. */
export interface ModelBudgets {
  /** Scale error, cents per octave. */
  readonly scale: UncertaintyBudget;
  /** Pitch at 0 V, cents (value: 0; the estimate is `model.hzAt0V`). */
  readonly pitchAt0V: UncertaintyBudget;
  /** The model's pitch at each step's voltage, cents, in input order (null for steps left out). */
  readonly steps: readonly UncertaintyBudget[];
}

/**
 * Budgets of the scale, the 0 V pitch and each step.
 *
 * @param model - The fitted model.
 * @param steps - Every input step, in the order given to the model.
 * @param opts - Meter, source, clock, temperature.
 * @example modelBudgets(model, steps, {}).scale.expanded // 0.0082 (cents per octave)
 */
export function modelBudgets(
  model: CalibrationModelOk,
  steps: readonly BudgetStep[],
  opts: BudgetOptions = {},
): ModelBudgets {
  return { ...lineBudgets(model, steps, opts), steps: steps.map((s) => stepBudget(s, opts)) };
}

/**
 * Budgets of the model's line alone: the scale error (cents per octave) and the pitch at 0 V (cents).
 *
 * @param model - The fitted model.
 * @param steps - Every input step, in the order given to the model.
 * @param opts - Meter, source, clock, temperature.
 * @example lineBudgets(model, steps, {}).scale.expanded // 0.0082 (cents per octave)
 */
export function lineBudgets(
  model: CalibrationModelOk,
  steps: readonly BudgetStep[],
  opts: BudgetOptions = {},
): Pick<ModelBudgets, 'scale' | 'pitchAt0V'> {
  return {
    scale: derivedBudget(
      model,
      steps,
      scaleSensitivities(model),
      'scale error',
      'cents per octave',
      model.scaleErrorCentsPerOctave,
      opts,
    ),
    pitchAt0V: derivedBudget(
      model,
      steps,
      predictionSensitivities(model, 0),
      'pitch at 0 V',
      'cents',
      0,
      opts,
    ),
  };
}
