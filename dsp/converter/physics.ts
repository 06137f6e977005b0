/**
 * Converter physics: the thermal voltage, the volts per octave at an exponential converter's base,
 * its temperature coefficient, and the two high-frequency errors (core reset time and bulk emitter
 * resistance), with a least-squares comparison that tells the two apart from measured deviations.
 *
 * Constants are the exact values fixed by the 2019 SI redefinition (BIPM, The International System of
 * Units, SI Brochure, 9th edition, 2019). The diode law `Ic = Is·exp(Vbe/VT)` with `VT = kT/q` is the
 * Ebers–Moll model of the bipolar transistor. The other figures are derived from these as shown beside
 * each function.
 *
 * All functions are pure and allocate only their results.
 */
import {
  weightedLeastSquares,
  type Celsius,
  type Cents,
  type Hertz,
  type Kelvin,
  type Ohms,
  type Seconds,
  type Volts,
  type WeightedLeastSquares,
} from '../math/index.ts';

/** Boltzmann constant, J/K, exact (BIPM SI Brochure, 9th ed., 2019). */
export const BOLTZMANN_J_PER_K = 1.380649e-23;

/** Elementary charge, C, exact (BIPM SI Brochure, 9th ed., 2019). */
export const ELEMENTARY_CHARGE_C = 1.602176634e-19;

/** Kelvin temperature of 0 °C, exact by the definition of the degree Celsius (BIPM SI Brochure, 9th ed.). */
export const ZERO_CELSIUS_KELVIN: Kelvin = 273.15;

/** Cents per octave (Ellis, 1885). */
const CENTS_PER_OCTAVE = 1200;

/** Highest temperature accepted, °C: far beyond any semiconductor's rating, only to catch unit slips. */
const MAX_TEMP_C: Celsius = 1000;

function requireTempC(name: string, tempC: number): void {
  if (!Number.isFinite(tempC) || tempC <= -ZERO_CELSIUS_KELVIN || tempC > MAX_TEMP_C) {
    throw new RangeError(
      `${name} must be a finite temperature above −273.15 °C and at most ${MAX_TEMP_C} °C, got ${tempC}`,
    );
  }
}

function requirePositive(name: string, value: number): void {
  if (!Number.isFinite(value) || value <= 0) {
    throw new RangeError(`${name} must be a finite number greater than 0, got ${value}`);
  }
}

function requireNonNegative(name: string, value: number): void {
  if (!Number.isFinite(value) || value < 0) {
    throw new RangeError(`${name} must be a finite number at least 0, got ${value}`);
  }
}

function requireFinite(name: string, value: number): void {
  if (!Number.isFinite(value)) throw new RangeError(`${name} must be a finite number, got ${value}`);
}

/**
 * Thermodynamic temperature of a Celsius temperature: `T = t + 273.15` (BIPM SI Brochure, 9th ed.).
 *
 * @param tempC - Temperature, °C, above −273.15 and at most 1000.
 * @returns Kelvin.
 * @throws RangeError when `tempC` is outside that range.
 * @example celsiusToKelvin(25) // 298.15
 */
export function celsiusToKelvin(tempC: Celsius): Kelvin {
  requireTempC('tempC', tempC);
  return tempC + ZERO_CELSIUS_KELVIN;
}

/**
 * Thermal voltage `VT = kT/q` (Ebers–Moll diode law; exact k and q from the BIPM SI Brochure, 9th ed.).
 * k/q = 86.173 33 µV/K.
 *
 * @param tempC - Junction temperature, °C, above −273.15 and at most 1000.
 * @returns Volts.
 * @throws RangeError when `tempC` is outside that range.
 * @example thermalVoltageVolts(25) // 0.025 692 58…
 */
export function thermalVoltageVolts(tempC: Celsius): Volts {
  return (BOLTZMANN_J_PER_K * celsiusToKelvin(tempC)) / ELEMENTARY_CHARGE_C;
}

/**
 * Base–emitter voltage change for one octave (a doubling of collector current) in an exponential
 * converter: `ΔVbe = VT·ln 2`, from `Ic = Is·exp(Vbe/VT)` (Ebers–Moll). 17.510 mV at 20 °C,
 * 17.809 mV at 25 °C, 17.928 mV at 27 °C, 19.302 mV at 50 °C (derived).
 *
 * @param tempC - Junction temperature, °C, above −273.15 and at most 1000.
 * @returns Volts per octave at the base.
 * @example voltsPerOctaveAtBase(25) // 0.017 809 1…
 */
export function voltsPerOctaveAtBase(tempC: Celsius): Volts {
  return thermalVoltageVolts(tempC) * Math.LN2;
}

/**
 * Attenuation from the control input to the base that makes 1 V at the input one octave:
 * `1 V / (VT·ln 2)` (derived from {@link voltsPerOctaveAtBase}). About 56.15 at 25 °C.
 *
 * @param tempC - Junction temperature, °C, above −273.15 and at most 1000.
 * @returns Dimensionless ratio (input volts per base volt).
 * @example attenuationForOneVoltPerOctave(25) // 56.151…
 */
export function attenuationForOneVoltPerOctave(tempC: Celsius): number {
  return 1 / voltsPerOctaveAtBase(tempC);
}

/**
 * Relative temperature coefficient of the converter's scale, which goes as 1/T: `−d(ln S)/dT = 1/T`,
 * returned as a positive number of ppm/K (derived from `VT = kT/q`). 3354 ppm/K at 25 °C. A tempco
 * resistor of about +3300 to +3500 ppm/K compensates it (common practice).
 *
 * @param tempC - Junction temperature, °C, above −273.15 and at most 1000.
 * @returns ppm per kelvin (magnitude; the scale falls as the temperature rises).
 * @example scaleTempcoPpmPerKelvin(25) // 3354.0…
 */
export function scaleTempcoPpmPerKelvin(tempC: Celsius): number {
  return 1e6 / celsiusToKelvin(tempC);
}

/**
 * Pitch drift of an uncompensated converter per kelvin, for each octave between the played pitch and
 * the converter's pivot (the pitch whose drift is zero): `1200·(1/T)` cents/K per octave (derived:
 * the number of octaves from the pivot, n ∝ 1/T, so dn/dT = −n/T). About 4.0 cents/K per octave at
 * 25 °C. Above the pivot a warmer converter plays flat; below it, sharp. A drift figure means nothing
 * without saying how far from the pivot.
 *
 * @param tempC - Junction temperature, °C, above −273.15 and at most 1000.
 * @returns Cents per kelvin per octave from the pivot (magnitude).
 * @example uncompensatedDriftCentsPerKelvinPerOctave(25) // 4.0248…
 */
export function uncompensatedDriftCentsPerKelvinPerOctave(tempC: Celsius): Cents {
  return CENTS_PER_OCTAVE / celsiusToKelvin(tempC);
}

/**
 * Pitch error of a sawtooth core whose reset takes `resetSeconds` added to every period:
 * `−1200·log2(1 + f·t)`, where `f` is the frequency the core would have with an instant reset (derived:
 * the period becomes 1/f + t). 1 µs at 1 kHz is −1.730 cents; 4.55 µs at 1 kHz is −7.859 cents.
 *
 * @param hz - Ideal (instant-reset) frequency, Hz, > 0.
 * @param resetSeconds - Reset time, s, ≥ 0.
 * @returns Cents (≤ 0: the core plays flat).
 * @throws RangeError when `hz` ≤ 0 or `resetSeconds` < 0 or either is not finite.
 * @example resetTimeErrorCents(1000, 1e-6) // −1.7302…
 */
export function resetTimeErrorCents(hz: Hertz, resetSeconds: Seconds): Cents {
  requirePositive('hz', hz);
  requireNonNegative('resetSeconds', resetSeconds);
  return -CENTS_PER_OCTAVE * Math.log2(1 + hz * resetSeconds);
}

/**
 * Pitch error from a bulk emitter resistance `R` carrying collector current `Ic`: the resistance
 * subtracts `Ic·R` from the junction's Vbe, which at `VT·ln 2` per octave costs
 * `−1200·Ic·R/(VT·ln 2)` cents (derived from Ebers–Moll). 1 Ω at 100 µA is −6.7 cents at 25 °C and
 * 1 mA is −67 cents: the error doubles with each octave because the current does.
 *
 * @param collectorAmps - Collector current, A, ≥ 0.
 * @param ohms - Bulk emitter (plus any unbypassed) resistance, Ω, ≥ 0.
 * @param tempC - Junction temperature, °C, above −273.15 and at most 1000. Default 25.
 * @returns Cents (≤ 0).
 * @example bulkResistanceErrorCents(100e-6, 1, 25) // −6.738…
 */
export function bulkResistanceErrorCents(collectorAmps: number, ohms: Ohms, tempC: Celsius = 25): Cents {
  requireNonNegative('collectorAmps', collectorAmps);
  requireNonNegative('ohms', ohms);
  return (-CENTS_PER_OCTAVE * collectorAmps * ohms) / voltsPerOctaveAtBase(tempC);
}

/**
 * Cents corresponding to a control-voltage error: `1200·(mV/1000)/voltsPerOctave`. At 1 V/oct,
 * 1 mV is 1.2 cents and a semitone (100 cents, Ellis 1885) is 83.333 mV (derived).
 *
 * @param mv - Voltage, mV, finite (signed).
 * @param voltsPerOctave - Volts per octave at the point where `mv` is applied, V, > 0. Default 1
 *   (a 1 V/oct control input); pass {@link voltsPerOctaveAtBase} for a voltage at the converter's base.
 * @returns Cents (same sign as `mv`).
 * @example millivoltsToCents(1) // 1.2
 */
export function millivoltsToCents(mv: number, voltsPerOctave: Volts = 1): Cents {
  requireFinite('mv', mv);
  requirePositive('voltsPerOctave', voltsPerOctave);
  return (CENTS_PER_OCTAVE * (mv / 1000)) / voltsPerOctave;
}

/**
 * Control-voltage change, in millivolts, that moves the pitch by `cents`: the inverse of
 * {@link millivoltsToCents}, `cents/1200·voltsPerOctave·1000`.
 *
 * @param cents - Interval, cents, finite (signed).
 * @param voltsPerOctave - Volts per octave where the voltage is applied, V, > 0. Default 1.
 * @returns Millivolts (same sign as `cents`).
 * @example centsToMillivolts(100) // 83.333…
 */
export function centsToMillivolts(cents: Cents, voltsPerOctave: Volts = 1): number {
  requireFinite('cents', cents);
  requirePositive('voltsPerOctave', voltsPerOctave);
  return (cents / CENTS_PER_OCTAVE) * voltsPerOctave * 1000;
}

// ---------------------------------------------------------------------------------------------------
// Telling reset time from bulk resistance
// ---------------------------------------------------------------------------------------------------

/** Smallest standard uncertainty used as a weight, cents: keeps 1/σ² finite for perfect readings. */
export const HF_MIN_UNCERTAINTY_CENTS: Cents = 0.001;

/** Measured high-frequency deviations for {@link compareHighFrequencyModels}. */
export interface HfDeviations {
  /** Measured frequency of each step, Hz, > 0. */
  readonly hz: readonly Hertz[];
  /** Each step's deviation from its ideal pitch, cents (negative = flat). */
  readonly centsFromIdeal: readonly Cents[];
  /**
   * Standard uncertainty of each deviation, cents, ≥ 0: one number for all steps or one per step.
   * Values below {@link HF_MIN_UNCERTAINTY_CENTS} are raised to it.
   */
  readonly uncertaintyCents: Cents | readonly Cents[];
  /**
   * Control voltage of each step, V. When given, each model also fits a straight line
   * `c0 + e·V` (an unknown offset and scale error), so `centsFromIdeal` may be measured against any
   * straight line, for example the nominal 1 V/oct through the first step. When absent, the
   * deviations must already be relative to the true ideal (both models are zero at 0 Hz).
   */
  readonly volts?: readonly Volts[];
}

/** Options for {@link compareHighFrequencyModels}. */
export interface HfCompareOptions {
  /** Chi-squared difference needed to prefer one model, ≥ 0. Default 4 (a likelihood ratio of e² ≈ 7.4). */
  readonly decisiveDeltaChiSquared?: number;
  /** Significance, in standard errors, below which the HF term counts as absent, ≥ 0. Default 2. */
  readonly significanceSigma?: number;
}

/** Fields shared by both fitted high-frequency models. */
export interface HfModelFitCommon {
  /** Weighted sum of squared normalised residuals. */
  readonly chiSquared: number;
  /** Degrees of freedom: points minus fitted parameters. */
  readonly dof: number;
  /** `chiSquared/dof`, or null when `dof` is 0. */
  readonly reducedChiSquared: number | null;
  /** Measured minus model deviation per step, cents, in input order. */
  readonly residualsCents: readonly Cents[];
  /** The fitted straight line when `volts` were given, else null. */
  readonly line: { readonly offsetCents: Cents; readonly centsPerVolt: Cents } | null;
}

/** The reset-time model fitted by least squares: `ln(f/f_ideal) = ln(1 − f·t)`. */
export interface ResetTimeFit extends HfModelFitCommon {
  readonly model: 'reset-time';
  /** Fitted reset time t, s (negative when the top runs sharp, i.e. over-compensated). */
  readonly resetSeconds: Seconds;
  /** Standard error of t, s (scaled up by the Birge ratio √(χ²/dof) when that exceeds 1). */
  readonly resetSecondsStdErr: Seconds;
}

/** The bulk-resistance model fitted by least squares: `ln(f/f_ideal) = −α·f`. */
export interface BulkResistanceFit extends HfModelFitCommon {
  readonly model: 'bulk-resistance';
  /** Fitted α, s (= 1/Hz): natural-log pitch loss per hertz. Negative when the top runs sharp. */
  readonly alpha: number;
  /** Standard error of α, s (scaled up by the Birge ratio when that exceeds 1). */
  readonly alphaStdErr: number;
}

/** Both models fitted and one of them clearly better. */
export interface HfComparisonDecided {
  readonly kind: 'ok';
  readonly better: 'reset-time' | 'bulk-resistance';
  /** `χ²(bulk) − χ²(reset)`, divided by the better fit's reduced χ² when that exceeds 1. */
  readonly deltaChiSquared: number;
  readonly resetTime: ResetTimeFit;
  readonly bulkResistance: BulkResistanceFit;
}

/**
 * The data cannot tell the models apart.
 *
 * - `too-few-points`: fewer than 3 distinct frequencies (5 when a line is fitted too).
 * - `no-hf-error`: the high-frequency term is zero within `significanceSigma` standard errors.
 * - `models-alike`: both fit about equally well (|Δχ²| below `decisiveDeltaChiSquared`).
 */
export interface HfComparisonUndecided {
  readonly kind: 'undecided';
  readonly reason: 'too-few-points' | 'no-hf-error' | 'models-alike';
  /** `χ²(bulk) − χ²(reset)` (scaled as in the decided case) when both fits exist. */
  readonly deltaChiSquared?: number;
  readonly resetTime?: ResetTimeFit;
  readonly bulkResistance?: BulkResistanceFit;
}

/** Outcome of {@link compareHighFrequencyModels}. */
export type HfComparison = HfComparisonDecided | HfComparisonUndecided;

/**
 * Weighted linear least squares `y ≈ Xβ` (the shared solver, dsp/math/wls.ts), with the singular limit
 * these fits have always used. Returns null when the design is singular.
 */
function weightedLinearSolve(
  columns: readonly number[][],
  y: readonly number[],
  w: readonly number[],
): WeightedLeastSquares | null {
  return weightedLeastSquares(columns, y, w, 1e-12);
}

/** Cents per natural-log unit of frequency ratio: 1200/ln 2. */
const CENTS_PER_NEPER = CENTS_PER_OCTAVE / Math.LN2;

function birge(chi: number, dof: number): number {
  return dof > 0 ? Math.max(1, Math.sqrt(chi / dof)) : 1;
}

/**
 * Fits both high-frequency error models to measured deviations by weighted least squares and says
 * which fits better (docs/facts.md, "The exponential converter", derived):
 *
 * - reset time t: `ln(f/f_ideal) = ln(1 − f·t)`, which bends further flat as f·t grows;
 * - bulk resistance: `ln(f/f_ideal) = −α·f`, exactly proportional to the measured f, because the
 *   collector current is.
 *
 * To first order both are −f·t, so only their curvature separates them: hundredth-of-a-cent readings
 * over the top octaves can. The bulk model is linear in α and solved in closed form; the reset model
 * is solved by variable projection (the linear terms in closed form for each t, t by a dense scan of
 * t·f_max over [−2, 0.999] refined by golden-section search). Standard errors come from the
 * Jacobian at the optimum and are scaled up by the Birge ratio √(χ²/dof) when the scatter exceeds the
 * stated uncertainties (Particle Data Group practice). The decision compares χ² of the two
 * equal-parameter fits (a likelihood ratio for Gaussian errors).
 *
 * @param data - Frequencies, deviations, uncertainties and optionally volts, arrays of equal length.
 * @param opts - Decision thresholds.
 * @returns Both fits and the better model, or `{ kind: 'undecided', reason }`.
 * @throws RangeError when the arrays differ in length or hold invalid values.
 * @example
 * const hz = [1000, 2000, 4000, 8000];
 * compareHighFrequencyModels({ hz, centsFromIdeal: hz.map((f) => 1200 * Math.log2(1 - f * 4.55e-6)), uncertaintyCents: 0.01 })
 * // { kind: 'ok', better: 'reset-time', resetTime: { resetSeconds: 4.55e-6, … }, … }
 */
export function compareHighFrequencyModels(data: HfDeviations, opts: HfCompareOptions = {}): HfComparison {
  const { hz, centsFromIdeal, uncertaintyCents, volts } = data;
  const decisive = opts.decisiveDeltaChiSquared ?? 4;
  const sigmaK = opts.significanceSigma ?? 2;
  requireNonNegative('decisiveDeltaChiSquared', decisive);
  requireNonNegative('significanceSigma', sigmaK);
  const n = hz.length;
  if (centsFromIdeal.length !== n) {
    throw new RangeError(
      `centsFromIdeal must have the same length as hz (${n}), got ${centsFromIdeal.length}`,
    );
  }
  if (typeof uncertaintyCents !== 'number' && uncertaintyCents.length !== n) {
    throw new RangeError(
      `uncertaintyCents must be a number or have the same length as hz (${n}), got ${uncertaintyCents.length}`,
    );
  }
  if (volts !== undefined && volts.length !== n) {
    throw new RangeError(`volts must have the same length as hz (${n}), got ${volts.length}`);
  }
  const w = new Array<number>(n);
  let fMax = 0;
  for (let i = 0; i < n; i++) {
    requirePositive(`hz[${i}]`, hz[i]);
    requireFinite(`centsFromIdeal[${i}]`, centsFromIdeal[i]);
    const u = typeof uncertaintyCents === 'number' ? uncertaintyCents : uncertaintyCents[i];
    requireNonNegative(
      typeof uncertaintyCents === 'number' ? 'uncertaintyCents' : `uncertaintyCents[${i}]`,
      u,
    );
    if (volts !== undefined) requireFinite(`volts[${i}]`, volts[i]);
    const s = Math.max(u, HF_MIN_UNCERTAINTY_CENTS);
    w[i] = 1 / (s * s);
    fMax = Math.max(fMax, hz[i]);
  }
  const lineCols: number[][] = volts === undefined ? [] : [new Array<number>(n).fill(1), volts.slice()];
  const pLine = lineCols.length;
  const distinct = new Set(hz).size;
  const distinctV = volts === undefined ? Infinity : new Set(volts).size;
  if (distinct < pLine + 3 || distinctV < 3) return { kind: 'undecided', reason: 'too-few-points' };
  const dof = n - pLine - 1;
  const y = centsFromIdeal.slice();

  // Bulk resistance: cents = −(1200/ln2)·α·f (+ line): linear in α.
  const bulkCol = hz.map((f) => -CENTS_PER_NEPER * f);
  const bulkSolve = weightedLinearSolve([...lineCols, bulkCol], y, w);
  // Reset time: cents = 1200·log2(1 − f·t) (+ line), by variable projection over t.
  // χ² of the weighted line (or of no line) through y − 1200·log2(1 − f·t): the same as weightedLinearSolve's,
  // in closed form about the weighted mean voltage (2200 calls per comparison, so no solver and no allocation).
  const yy = new Float64Array(n);
  let sw = 0;
  let swv = 0;
  for (let i = 0; i < n; i++) {
    sw += w[i];
    swv += w[i] * (volts?.[i] ?? 0);
  }
  const vBar = swv / sw;
  let svv = 0;
  for (let i = 0; i < n; i++) svv += w[i] * ((volts?.[i] ?? 0) - vBar) ** 2;
  const resetChi = (t: number): number => {
    let swy = 0;
    for (let i = 0; i < n; i++) {
      yy[i] = y[i] - CENTS_PER_OCTAVE * Math.log2(1 - hz[i] * t);
      swy += w[i] * yy[i];
    }
    if (!Number.isFinite(swy)) return Infinity;
    if (pLine === 0) {
      let chi = 0;
      for (let i = 0; i < n; i++) chi += w[i] * yy[i] * yy[i];
      return chi;
    }
    const yBar = swy / sw;
    let svy = 0;
    for (let i = 0; i < n; i++) svy += w[i] * (volts![i] - vBar) * (yy[i] - yBar);
    const slope = svy / svv;
    let chi = 0;
    for (let i = 0; i < n; i++) {
      const r = yy[i] - yBar - slope * (volts![i] - vBar);
      chi += w[i] * r * r;
    }
    return chi;
  };
  if (bulkSolve === null) return { kind: 'undecided', reason: 'too-few-points' };
  const uLo = -2;
  const uHi = 0.999;
  const steps = 2000;
  let bestK = 0;
  let bestChi = Infinity;
  for (let k = 0; k <= steps; k++) {
    const c = resetChi((uLo + ((uHi - uLo) * k) / steps) / fMax);
    if (c < bestChi) {
      bestChi = c;
      bestK = k;
    }
  }
  const tHat = goldenSectionMidpoint(
    resetChi,
    (uLo + ((uHi - uLo) * Math.max(0, bestK - 1)) / steps) / fMax,
    (uLo + ((uHi - uLo) * Math.min(steps, bestK + 1)) / steps) / fMax,
    200,
    (a, b) => b - a <= 1e-15 * Math.max(Math.abs(a), Math.abs(b), 1e-12),
  );
  const yReset = y.map((c, i) => c - CENTS_PER_OCTAVE * Math.log2(1 - hz[i] * tHat));
  const lineSolve = weightedLinearSolve(lineCols, yReset, w);
  // Jacobian of the reset model at the optimum, for the covariance: ∂c/∂t = −(1200/ln2)·f/(1 − f·t).
  const jt = hz.map((f) => (-CENTS_PER_NEPER * f) / (1 - f * tHat));
  const jac = weightedLinearSolve(
    [...lineCols, jt],
    y.map(() => 0),
    w,
  );
  if (lineSolve === null || jac === null) return { kind: 'undecided', reason: 'too-few-points' };
  const resetChi2 = lineSolve.chiSquared;
  const lineOf = (beta: readonly number[]) =>
    pLine === 0 ? null : { offsetCents: beta[0], centsPerVolt: beta[1] };
  const reduced = (chi: number) => (dof > 0 ? chi / dof : null);
  const resetTime: ResetTimeFit = {
    model: 'reset-time',
    resetSeconds: tHat,
    resetSecondsStdErr: Math.sqrt(jac.cov[pLine][pLine]) * birge(resetChi2, dof),
    chiSquared: resetChi2,
    dof,
    reducedChiSquared: reduced(resetChi2),
    residualsCents: lineSolve.residuals,
    line: lineOf(lineSolve.beta),
  };
  const bulkResistance: BulkResistanceFit = {
    model: 'bulk-resistance',
    alpha: bulkSolve.beta[pLine],
    alphaStdErr: Math.sqrt(bulkSolve.cov[pLine][pLine]) * birge(bulkSolve.chiSquared, dof),
    chiSquared: bulkSolve.chiSquared,
    dof,
    reducedChiSquared: reduced(bulkSolve.chiSquared),
    residualsCents: bulkSolve.residuals,
    line: lineOf(bulkSolve.beta.slice(0, pLine)),
  };
  const bestReduced = Math.min(resetChi2, bulkSolve.chiSquared) / Math.max(dof, 1);
  const delta = (bulkSolve.chiSquared - resetChi2) / Math.max(1, bestReduced);
  if (Math.abs(bulkResistance.alpha) < sigmaK * bulkResistance.alphaStdErr) {
    return { kind: 'undecided', reason: 'no-hf-error', deltaChiSquared: delta, resetTime, bulkResistance };
  }
  if (Math.abs(delta) < decisive) {
    return { kind: 'undecided', reason: 'models-alike', deltaChiSquared: delta, resetTime, bulkResistance };
  }
  return {
    kind: 'ok',
    better: delta > 0 ? 'reset-time' : 'bulk-resistance',
    deltaChiSquared: delta,
    resetTime,
    bulkResistance,
  };
}

/**
 * Golden-section search for the minimum of a unimodal function on [a, b], returning the midpoint of the
 * final bracket. Each step keeps the two interior points at the golden ratio (Kiefer 1953; Press et al.,
 * "Numerical Recipes", 3rd ed., §10.2).
 *
 * @param f - The function to minimise (Infinity where it has no value).
 * @param a - Lower end of the bracket.
 * @param b - Upper end of the bracket, > a.
 * @param maxIterations - Most steps to take.
 * @param narrowEnough - True once the bracket [a, b] is small enough to stop.
 * @example goldenSectionMidpoint((x) => (x - 2) ** 2, 0, 5, 200, (a, b) => b - a < 1e-9) // ≈ 2
 */
export function goldenSectionMidpoint(
  f: (x: number) => number,
  a: number,
  b: number,
  maxIterations: number,
  narrowEnough: (a: number, b: number) => boolean,
): number {
  const g = (Math.sqrt(5) - 1) / 2;
  let x1 = b - g * (b - a);
  let x2 = a + g * (b - a);
  let f1 = f(x1);
  let f2 = f(x2);
  for (let it = 0; it < maxIterations && !narrowEnough(a, b); it++) {
    if (f1 < f2) {
      b = x2;
      x2 = x1;
      f2 = f1;
      x1 = b - g * (b - a);
      f1 = f(x1);
    } else {
      a = x1;
      x1 = x2;
      f1 = f2;
      x2 = a + g * (b - a);
      f2 = f(x2);
    }
  }
  return (a + b) / 2;
}
