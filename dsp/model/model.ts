/**
 * The calibration model: one fit behind every figure Spanmeter shows, saves and advises on.
 *
 * Each step's pitch, in cents from the ideal 1 V/oct line through 1 Hz at 0 V, `y = 1200·log2(f) − 1200·V`,
 * is modelled as
 *
 * ```
 *   y = a + e·V + h(f) + ℓ(f)
 *   h(f) = 1200·log2(1 − f·t) − (1200/ln 2)·α·f/(1 − f·t)      (high-frequency droop)
 *   ℓ(f) = (1200/ln 2)·f_L/f                                     (low-end floor)
 * ```
 *
 * with a the 0 V offset, e the scale error in cents per octave, t a core reset time, α a bulk emitter
 * resistance term (docs/facts.md, "The exponential converter"; both derived in `dsp/converter/physics.ts`) and f_L a
 * constant frequency floor such as a leakage current adds at the bottom of the range (first order of
 * `f = f_expo + f_L`, derived). Eight candidate models (HF term none, reset time, bulk resistance or both;
 * with or without the low-end term) are fitted by weighted least squares (the reset time by variable
 * projection: the linear terms in closed form for each t, t by a scan refined by golden-section search),
 * and the one with the smallest corrected Akaike information criterion AICc = χ² + 2p + 2p(p+1)/(n−p−1)
 * is chosen (Hurvich & Tsai 1989; Burnham & Anderson, "Model Selection and Multimodel Inference", 2002,
 * §2.4). To first order in f·t both HF terms are −f·(t + α), so unless both are resolved the HF term is
 * reported as an *equivalent* reset time t + α.
 *
 * Robustness: a step whose pitch disagrees with the model fitted to the other steps by more than
 * `suspectSigma` combined standard uncertainties and more than `suspectMinCents` is flagged
 * `suspect-voltage`, with the voltage its pitch corresponds to, and left out of the fit (leave-one-out
 * prediction; the worst step first, then again on the rest).
 *
 * The straight line through every step ({@link fitTracking}) stays available beside it, labelled as such.
 */
import { fitTracking, MIN_UNCERTAINTY_CENTS, type TrackingFitOk, type TrackingPoint } from './fit.ts';
import { weightedLeastSquares, type Cents, type Hertz, type Seconds, type Volts } from '../math/index.ts';
import { goldenSectionMidpoint } from '../converter/index.ts';

const CENTS_PER_OCTAVE = 1200;
/** Cents per neper (natural-log unit of frequency ratio): 1200/ln 2. */
const CENTS_PER_NEPER = CENTS_PER_OCTAVE / Math.LN2;

/** The high-frequency term of a model. */
export type HfTerm = 'none' | 'reset-time' | 'bulk-resistance' | 'both';

/** One candidate model's terms. */
export interface ModelTerms {
  readonly hf: HfTerm;
  readonly lowEnd: boolean;
}

/** How one candidate fitted. */
export interface ModelCandidate extends ModelTerms {
  /** Number of fitted parameters. */
  readonly parameters: number;
  readonly chiSquared: number;
  /** χ² + 2p + 2p(p+1)/(n−p−1). */
  readonly aicc: number;
}

/** A step flagged as inconsistent with the model fitted to the other steps. */
export interface SuspectStep {
  /** Index into the input points. */
  readonly index: number;
  /** The voltage given for the step, V. */
  readonly volts: Volts;
  /** The voltage the step's pitch corresponds to on the model fitted without it, V. */
  readonly likelyVolts: Volts;
  /** Measured minus predicted pitch, cents. */
  readonly deviationCents: Cents;
  /** Combined standard uncertainty of that deviation, cents. */
  readonly uncertaintyCents: Cents;
}

/** Options for {@link fitCalibrationModel}. */
export interface ModelOptions {
  /** Lowest voltage to include, V (inclusive). Default: no limit. */
  readonly fromVolts?: Volts;
  /** Highest voltage to include, V (inclusive). Default: no limit. */
  readonly toVolts?: Volts;
  /** Deviation, in combined standard uncertainties, beyond which a step is suspect, > 0. Default 5. */
  readonly suspectSigma?: number;
  /** …and at least this many cents, ≥ 0. Default 3 (a 2.5 mV voltage error at 1 V/oct). */
  readonly suspectMinCents?: Cents;
  /** Most steps that may be left out as suspect, ≥ 0. Default ⌊n/4⌋. */
  readonly maxSuspects?: number;
  /** Restrict the candidates (tests, or a user who wants the straight line). Default: all eight. */
  readonly candidates?: readonly ModelTerms[];
  /**
   * Per point, the standard uncertainty the labelled straight line weighs it by, cents (one per point). Default:
   * each point's `uncertaintyCents`. The pipeline passes the readings' own, so the straight line is the one
   * earlier versions reported.
   */
  readonly straightLineUncertaintyCents?: readonly Cents[];
}

/** The chosen model's parameters. */
export interface ModelParameters {
  /** a: pitch of the line at 0 V, cents above 1 Hz minus 0 (so `hzAt0VLine = 2^(a/1200)`). */
  readonly offsetCents: Cents;
  /** e: scale error, cents per octave (negative = octaves narrow). */
  readonly scaleErrorCentsPerOctave: Cents;
  /** t: reset time, s (0 when the model has none; negative = over-compensated). */
  readonly resetSeconds: Seconds;
  /** α: bulk-resistance term, s (0 when the model has none). */
  readonly bulkAlphaSeconds: Seconds;
  /** f_L: low-end floor, Hz (0 when the model has none). */
  readonly lowEndHz: Hertz;
}

/** A fitted calibration model. */
export interface CalibrationModelOk {
  readonly kind: 'ok';
  /** Terms of the chosen model. */
  readonly terms: ModelTerms;
  /** How the terms were chosen. */
  readonly criterion: 'AICc';
  /** Every candidate tried on the final set of steps, best first. */
  readonly candidates: readonly ModelCandidate[];
  readonly parameters: ModelParameters;
  /** Standard errors of the parameters from the stated uncertainties (Birge-scaled when the scatter is larger). */
  readonly parameterStdErr: ModelParameters;
  /** Scale, octaves per volt: `1 + e/1200`. */
  readonly octavesPerVolt: number;
  readonly scaleErrorCentsPerOctave: Cents;
  readonly scaleErrorStdErrCents: Cents;
  /** Pitch the model gives at 0 V (HF and low-end terms included), Hz. */
  readonly hzAt0V: Hertz;
  readonly hzAt0VStdErrCents: Cents;
  /**
   * The HF term as one equivalent reset time `t + α`, s (to first order in f·t both terms flatten the top
   * alike); null when the model has no HF term.
   */
  readonly equivalentResetSeconds: Seconds | null;
  readonly equivalentResetSecondsStdErr: Seconds | null;
  /** True when reset time and bulk resistance were both fitted and each is resolved (over 2 standard errors). */
  readonly mixtureResolved: boolean;
  /** Indices of the steps used, ascending. */
  readonly usedIndices: readonly number[];
  /** Steps flagged as suspect (left out), worst first. */
  readonly suspects: readonly SuspectStep[];
  /** Steps outside the voltage range (left out, not suspect). */
  readonly outOfRange: readonly number[];
  /** Measured minus model pitch for every input step, cents (also for those left out). */
  readonly residualsCents: readonly Cents[];
  readonly chiSquared: number;
  /** Steps used minus parameters. */
  readonly dof: number;
  /** `max(1, √(χ²/dof))`, 1 when dof is 0. */
  readonly birgeRatio: number;
  readonly fromVolts: Volts;
  readonly toVolts: Volts;
  /**
   * Sensitivity of each parameter to each used step's cents, `∂θ_k/∂y_j` in the order of `usedIndices`
   * (rows: offset, scale error, then the model's extra parameters in the order t, α, f_L). For the GUM
   * budget: a quantity `q = gᵀθ` has sensitivity coefficients `gᵀ·gain`.
   */
  readonly gain: readonly (readonly number[])[];
  /** The straight line through every step in the range, suspect steps included, labelled as such. */
  readonly straightLine: TrackingFitOk | null;
  /** Covariance of (offset a, scale error e), cents², cents²/V, cents²/V² (Birge-scaled). */
  readonly lineCovariance: { readonly offset: number; readonly cross: number; readonly scale: number };
}

/**
 * No model: `too-few-points` with fewer than two usable steps, `no-voltage-span` when they share one voltage.
 */
export interface CalibrationModelNone {
  readonly kind: 'none';
  readonly reason: 'too-few-points' | 'no-voltage-span';
}

/** Outcome of {@link fitCalibrationModel}. */
export type CalibrationModel = CalibrationModelOk | CalibrationModelNone;

/** Every candidate: HF none/reset/bulk/both × low end off/on. */
export const ALL_CANDIDATES: readonly ModelTerms[] = Object.freeze(
  (['none', 'reset-time', 'bulk-resistance', 'both'] as const).flatMap((hf) => [
    { hf, lowEnd: false },
    { hf, lowEnd: true },
  ]),
);

function hasReset(t: ModelTerms): boolean {
  return t.hf === 'reset-time' || t.hf === 'both';
}
function hasBulk(t: ModelTerms): boolean {
  return t.hf === 'bulk-resistance' || t.hf === 'both';
}
function paramCount(t: ModelTerms): number {
  return 2 + (hasReset(t) ? 1 : 0) + (hasBulk(t) ? 1 : 0) + (t.lowEnd ? 1 : 0);
}

interface Data {
  readonly v: number[];
  readonly f: number[];
  readonly y: number[];
  readonly w: number[];
}

interface Solve {
  readonly beta: number[];
  readonly cov: number[][];
  readonly chi: number;
  readonly gain: number[][];
}

/** Weighted linear least squares (the shared solver, dsp/math/wls.ts); null when singular. */
function wls(cols: readonly number[][], y: readonly number[], w: readonly number[]): Solve | null {
  const s = weightedLeastSquares(cols, y, w);
  return s === null ? null : { beta: s.beta, cov: s.cov, chi: s.chiSquared, gain: s.gain };
}

/** Linear columns of a model at reset time t (bulk column depends on t). */
function columns(terms: ModelTerms, v: readonly number[], f: readonly number[], t: number): number[][] {
  const cols: number[][] = [v.map(() => 1), v.slice()];
  if (hasBulk(terms)) cols.push(f.map((x) => (-CENTS_PER_NEPER * x) / (1 - x * t)));
  if (terms.lowEnd) cols.push(f.map((x) => CENTS_PER_NEPER / x));
  return cols;
}

interface FittedModel {
  readonly terms: ModelTerms;
  readonly t: number;
  /** a, e, [α], [f_L] */
  readonly linear: number[];
  readonly chi: number;
  /** Full parameter vector in order a, e, [t], [α], [f_L], with covariance and gain (Jacobian at the optimum). */
  readonly theta: number[];
  readonly cov: number[][];
  readonly gain: number[][];
}

function resetShift(f: readonly number[], t: number): number[] {
  return f.map((x) => CENTS_PER_OCTAVE * Math.log2(1 - x * t));
}

/** Fits one candidate to the data (variable projection over t when it has a reset time). */
function fitCandidate(terms: ModelTerms, d: Data): FittedModel | null {
  const fMax = Math.max(...d.f);
  const solveAt = (t: number): Solve | null => {
    const shift = resetShift(d.f, t);
    return wls(
      columns(terms, d.v, d.f, t),
      d.y.map((y, i) => y - shift[i]),
      d.w,
    );
  };
  let t = 0;
  if (hasReset(terms)) {
    const uLo = -0.3;
    const uHi = 0.5;
    const steps = 100;
    let bestK = -1;
    let bestChi = Infinity;
    for (let k = 0; k <= steps; k++) {
      const s = solveAt((uLo + ((uHi - uLo) * k) / steps) / fMax);
      if (s !== null && s.chi < bestChi) {
        bestChi = s.chi;
        bestK = k;
      }
    }
    if (bestK < 0) return null;
    const chiAt = (x: number) => solveAt(x)?.chi ?? Infinity;
    t = goldenSectionMidpoint(
      chiAt,
      (uLo + ((uHi - uLo) * Math.max(0, bestK - 1)) / steps) / fMax,
      (uLo + ((uHi - uLo) * Math.min(steps, bestK + 1)) / steps) / fMax,
      60,
      (a, b) => b - a <= 1e-16,
    );
  }
  const lin = solveAt(t);
  if (lin === null) return null;
  if (!hasReset(terms)) {
    return { terms, t: 0, linear: lin.beta, chi: lin.chi, theta: lin.beta, cov: lin.cov, gain: lin.gain };
  }
  // Jacobian at the optimum for the covariance and the gain: ∂y/∂t = −(1200/ln2)·f/(1−ft) − α·(1200/ln2)·f²/(1−ft)².
  const alpha = hasBulk(terms) ? lin.beta[2] : 0;
  const jt = d.f.map((x) => {
    const q = 1 - x * t;
    return (-CENTS_PER_NEPER * x) / q - (alpha * CENTS_PER_NEPER * x * x) / (q * q);
  });
  const cols = columns(terms, d.v, d.f, t);
  const jac = [cols[0], cols[1], jt, ...cols.slice(2)];
  const lj = wls(jac, d.y, d.w);
  if (lj === null) return null;
  const theta = [lin.beta[0], lin.beta[1], t, ...lin.beta.slice(2)];
  return { terms, t, linear: lin.beta, chi: lin.chi, theta, cov: lj.cov, gain: lj.gain };
}

function paramsOf(m: FittedModel): ModelParameters {
  const rest = m.linear.slice(2);
  const alpha = hasBulk(m.terms) ? rest.shift()! : 0;
  const fl = m.terms.lowEnd ? rest.shift()! : 0;
  return {
    offsetCents: m.linear[0],
    scaleErrorCentsPerOctave: m.linear[1],
    resetSeconds: m.t,
    bulkAlphaSeconds: alpha,
    lowEndHz: fl,
  };
}

/** Index of each named parameter in theta (−1 when absent). */
function thetaIndex(terms: ModelTerms): { t: number; alpha: number; fl: number } {
  let k = 2;
  const t = hasReset(terms) ? k++ : -1;
  const alpha = hasBulk(terms) ? k++ : -1;
  const fl = terms.lowEnd ? k++ : -1;
  return { t, alpha, fl };
}

/** The model's cents (from 1 Hz·2^V) at a pitch f and voltage V. */
function modelCents(p: ModelParameters, volts: number, hz: number): number {
  const q = 1 - hz * p.resetSeconds;
  const h =
    (q > 0 ? CENTS_PER_OCTAVE * Math.log2(q) : -Infinity) - (CENTS_PER_NEPER * p.bulkAlphaSeconds * hz) / q;
  return p.offsetCents + p.scaleErrorCentsPerOctave * volts + h + (CENTS_PER_NEPER * p.lowEndHz) / hz;
}

/** Gradient of the model's cents with respect to theta at (V, f). */
function modelGradient(terms: ModelTerms, p: ModelParameters, volts: number, hz: number): number[] {
  const idx = thetaIndex(terms);
  const g = new Array<number>(paramCount(terms)).fill(0);
  g[0] = 1;
  g[1] = volts;
  const q = 1 - hz * p.resetSeconds;
  if (idx.t >= 0)
    g[idx.t] = (-CENTS_PER_NEPER * hz) / q - (p.bulkAlphaSeconds * CENTS_PER_NEPER * hz * hz) / (q * q);
  if (idx.alpha >= 0) g[idx.alpha] = (-CENTS_PER_NEPER * hz) / q;
  if (idx.fl >= 0) g[idx.fl] = CENTS_PER_NEPER / hz;
  return g;
}

/**
 * Pitch the model plays at a voltage, Hz: solves `1200·log2 f = 1200·V + y(V, f)` by fixed-point iteration
 * from the line's pitch (the HF and low-end terms are small corrections, so it converges in a few steps).
 */
function solveHz(p: ModelParameters, volts: number): number {
  let f = Math.pow(2, (p.offsetCents + (CENTS_PER_OCTAVE + p.scaleErrorCentsPerOctave) * volts) / 1200);
  for (let i = 0; i < 100; i++) {
    const c = modelCents(p, volts, f);
    if (!Number.isFinite(c)) break;
    const next = Math.pow(2, volts + c / CENTS_PER_OCTAVE);
    if (Math.abs(next - f) <= 1e-13 * f) {
      f = next;
      break;
    }
    f = 0.5 * f + 0.5 * next;
  }
  return f;
}

/** Voltage whose model pitch is f: `V = (1200·log2 f − a − h(f) − ℓ(f))/(1200 + e)` (explicit in f). */
function voltsForHz(p: ModelParameters, hz: number): number {
  const atZero = modelCents({ ...p, scaleErrorCentsPerOctave: 0 }, 0, hz);
  return (CENTS_PER_OCTAVE * Math.log2(hz) - atZero) / (CENTS_PER_OCTAVE + p.scaleErrorCentsPerOctave);
}

function aiccOf(chi: number, p: number, n: number): number {
  return chi + 2 * p + (2 * p * (p + 1)) / (n - p - 1);
}

interface Chosen {
  readonly best: FittedModel;
  readonly tried: ModelCandidate[];
}

function chooseModel(d: Data, candidates: readonly ModelTerms[]): Chosen | null {
  const n = d.y.length;
  const distinctV = new Set(d.v).size;
  const tried: { c: ModelCandidate; m: FittedModel }[] = [];
  for (const terms of candidates) {
    const p = paramCount(terms);
    // Every extra term needs two spare steps; the straight line needs two distinct voltages.
    if (p > 2 && (n - p < 2 || distinctV < p)) continue;
    if (p === 2 && distinctV < 2) continue;
    const m = fitCandidate(terms, d);
    if (m === null) continue;
    const aicc = n - p - 1 > 0 ? aiccOf(m.chi, p, n) : Infinity;
    tried.push({ c: { ...terms, parameters: p, chiSquared: m.chi, aicc }, m });
  }
  if (tried.length === 0) return null;
  tried.sort((a, b) => a.c.aicc - b.c.aicc || a.c.parameters - b.c.parameters);
  // With two or three steps AICc is infinite for every model: take the simplest (the line).
  const finite = tried.filter((x) => Number.isFinite(x.c.aicc));
  const best = finite.length > 0 ? finite[0].m : tried.find((x) => x.c.parameters === 2)!.m;
  return { best, tried: tried.map((x) => x.c) };
}

function validate(points: readonly TrackingPoint[]): void {
  if (!Array.isArray(points)) throw new RangeError(`points must be an array, got ${String(points)}`);
  points.forEach((p, i) => {
    if (!Number.isFinite(p.volts))
      throw new RangeError(`points[${i}].volts must be a finite number, got ${p.volts}`);
    if (!Number.isFinite(p.hz) || p.hz <= 0)
      throw new RangeError(`points[${i}].hz must be a finite number greater than 0, got ${p.hz}`);
    if (!Number.isFinite(p.uncertaintyCents) || p.uncertaintyCents < 0) {
      throw new RangeError(
        `points[${i}].uncertaintyCents must be a finite number at least 0, got ${p.uncertaintyCents}`,
      );
    }
  });
}

function dataOf(points: readonly TrackingPoint[], idx: readonly number[]): Data {
  return {
    v: idx.map((i) => points[i].volts),
    f: idx.map((i) => points[i].hz),
    y: idx.map((i) => CENTS_PER_OCTAVE * (Math.log2(points[i].hz) - points[i].volts)),
    w: idx.map((i) => {
      const s = Math.max(points[i].uncertaintyCents, MIN_UNCERTAINTY_CENTS);
      return 1 / (s * s);
    }),
  };
}

function birgeOf(chi: number, dof: number): number {
  return dof > 0 ? Math.max(1, Math.sqrt(chi / dof)) : 1;
}

/** Variance of the model's prediction at (V, f), cents², from theta's covariance times Birge². */
function predictionVariance(m: FittedModel, volts: number, hz: number, b2: number): number {
  const g = modelGradient(m.terms, paramsOf(m), volts, hz);
  let s = 0;
  for (let j = 0; j < g.length; j++) for (let k = 0; k < g.length; k++) s += g[j] * m.cov[j][k] * g[k];
  return Math.max(0, s) * b2;
}

/**
 * Fits the calibration model, flags suspect steps and returns every figure derived from the one fit (see
 * the module comment for the model, the selection criterion and the suspect rule).
 *
 * @param points - Measured steps, any order: volts finite, hz > 0, uncertaintyCents ≥ 0 (the step's
 *   independent standard uncertainty; raised to {@link MIN_UNCERTAINTY_CENTS}).
 * @param opts - Voltage range, suspect thresholds, candidate models.
 * @returns The model, or `{ kind: 'none', reason }`.
 * @throws RangeError naming the first invalid point or option.
 * @example
 * // 0…7 V from 32.703 Hz with a 2 µs reset time and a 1-cent-per-octave wide scale, σ = 0.01 cent:
 * fitCalibrationModel(steps)
 * // { kind: 'ok', terms: { hf: 'reset-time', lowEnd: false }, scaleErrorCentsPerOctave: 1.000…,
 * //   equivalentResetSeconds: 2.00e-6, suspects: [], … }
 */
export function fitCalibrationModel(
  points: readonly TrackingPoint[],
  opts: ModelOptions = {},
): CalibrationModel {
  validate(points);
  const from = opts.fromVolts ?? -Infinity;
  const to = opts.toVolts ?? Infinity;
  if (Number.isNaN(from) || Number.isNaN(to) || from > to) {
    throw new RangeError(`fromVolts (${from}) must be a number not above toVolts (${to})`);
  }
  const kSigma = opts.suspectSigma ?? 5;
  const minCents = opts.suspectMinCents ?? 3;
  if (!(kSigma > 0) || !Number.isFinite(kSigma))
    throw new RangeError(`suspectSigma must be a finite number greater than 0, got ${kSigma}`);
  if (!(minCents >= 0) || !Number.isFinite(minCents))
    throw new RangeError(`suspectMinCents must be a finite number at least 0, got ${minCents}`);
  const candidates = opts.candidates ?? ALL_CANDIDATES;
  if (candidates.length === 0) throw new RangeError('candidates must hold at least one model');

  const inRange: number[] = [];
  const outOfRange: number[] = [];
  points.forEach((p, i) => (p.volts >= from && p.volts <= to ? inRange : outOfRange).push(i));
  if (inRange.length < 2) return { kind: 'none', reason: 'too-few-points' };
  if (new Set(inRange.map((i) => points[i].volts)).size < 2)
    return { kind: 'none', reason: 'no-voltage-span' };
  const maxSuspects = opts.maxSuspects ?? Math.floor(inRange.length / 4);
  if (!Number.isInteger(maxSuspects) || maxSuspects < 0)
    throw new RangeError(`maxSuspects must be an integer at least 0, got ${maxSuspects}`);

  let used = inRange.slice();
  const suspects: SuspectStep[] = [];
  let chosen = chooseModel(dataOf(points, used), candidates);
  if (chosen === null) return { kind: 'none', reason: 'no-voltage-span' };

  // Leave-one-out screening for wrong voltages: the worst offender first, then again on the rest.
  while (suspects.length < maxSuspects && used.length >= 4) {
    let worst: SuspectStep | null = null;
    let worstScore = 0;
    for (const i of used) {
      const rest = used.filter((j) => j !== i);
      const restData = dataOf(points, rest);
      // Judge with the model chosen afresh on the other steps (the suspect must not shape it).
      const restChoice = chooseModel(restData, candidates);
      if (restChoice === null) continue;
      const m = restChoice.best;
      const terms = m.terms;
      const dofRest = rest.length - paramCount(terms);
      const b2 = birgeOf(m.chi, dofRest) ** 2;
      const p = points[i];
      const params = paramsOf(m);
      const dev = CENTS_PER_OCTAVE * (Math.log2(p.hz) - p.volts) - modelCents(params, p.volts, p.hz);
      const own = Math.max(p.uncertaintyCents, MIN_UNCERTAINTY_CENTS);
      const u = Math.sqrt(own * own * b2 + predictionVariance(m, p.volts, p.hz, b2));
      const score = Math.abs(dev) / u;
      if (Number.isFinite(dev) && score > kSigma && Math.abs(dev) > minCents && score > worstScore) {
        worstScore = score;
        worst = {
          index: i,
          volts: p.volts,
          likelyVolts: voltsForHz(params, p.hz),
          deviationCents: dev,
          uncertaintyCents: u,
        };
      }
    }
    if (worst === null) break;
    suspects.push(worst);
    used = used.filter((j) => j !== worst.index);
    const next = chooseModel(dataOf(points, used), candidates);
    if (next === null) break;
    chosen = next;
  }

  const best = chosen.best;
  const d = dataOf(points, used);
  const n = used.length;
  const p = paramCount(best.terms);
  const dof = n - p;
  const birgeRatio = birgeOf(best.chi, dof);
  const b2 = birgeRatio * birgeRatio;
  const params = paramsOf(best);
  const idx = thetaIndex(best.terms);
  const se = (k: number) => (k < 0 ? 0 : Math.sqrt(Math.max(0, best.cov[k][k]) * b2));
  const parameterStdErr: ModelParameters = {
    offsetCents: se(0),
    scaleErrorCentsPerOctave: se(1),
    resetSeconds: se(idx.t),
    bulkAlphaSeconds: se(idx.alpha),
    lowEndHz: se(idx.fl),
  };
  const hz0 = solveHz(params, 0);
  const hf = best.terms.hf;
  let eqReset: number | null = null;
  let eqResetSe: number | null = null;
  if (hf !== 'none') {
    eqReset = params.resetSeconds + params.bulkAlphaSeconds;
    const g = new Array<number>(p).fill(0);
    if (idx.t >= 0) g[idx.t] = 1;
    if (idx.alpha >= 0) g[idx.alpha] = 1;
    let s = 0;
    for (let j = 0; j < p; j++) for (let k = 0; k < p; k++) s += g[j] * best.cov[j][k] * g[k];
    eqResetSe = Math.sqrt(Math.max(0, s) * b2);
  }
  const mixtureResolved =
    hf === 'both' &&
    Math.abs(params.resetSeconds) > 2 * parameterStdErr.resetSeconds &&
    Math.abs(params.bulkAlphaSeconds) > 2 * parameterStdErr.bulkAlphaSeconds;
  const residualsCents = points.map(
    (pt) => CENTS_PER_OCTAVE * (Math.log2(pt.hz) - pt.volts) - modelCents(params, pt.volts, pt.hz),
  );
  const lineU = opts.straightLineUncertaintyCents;
  if (lineU !== undefined && lineU.length !== points.length) {
    throw new RangeError(
      `straightLineUncertaintyCents must have one entry per point (${points.length}), got ${lineU.length}`,
    );
  }
  const line = fitTracking(
    inRange.map((i) => (lineU === undefined ? points[i] : { ...points[i], uncertaintyCents: lineU[i] })),
    {},
  );
  const sortedUsed = used.slice().sort((a, b) => a - b);
  const order = sortedUsed.map((i) => used.indexOf(i));
  return {
    kind: 'ok',
    terms: best.terms,
    criterion: 'AICc',
    candidates: chooseModel(d, candidates)?.tried ?? [],
    parameters: params,
    parameterStdErr,
    octavesPerVolt: 1 + params.scaleErrorCentsPerOctave / CENTS_PER_OCTAVE,
    scaleErrorCentsPerOctave: params.scaleErrorCentsPerOctave,
    scaleErrorStdErrCents: parameterStdErr.scaleErrorCentsPerOctave,
    hzAt0V: hz0,
    hzAt0VStdErrCents: Math.sqrt(predictionVariance(best, 0, hz0, b2)),
    equivalentResetSeconds: eqReset,
    equivalentResetSecondsStdErr: eqResetSe,
    mixtureResolved,
    usedIndices: sortedUsed,
    suspects,
    outOfRange,
    residualsCents,
    chiSquared: best.chi,
    dof,
    birgeRatio,
    fromVolts: Math.min(...d.v),
    toVolts: Math.max(...d.v),
    gain: best.gain.map((row) => order.map((k) => row[k])),
    straightLine: line.kind === 'ok' ? line : null,
    lineCovariance: { offset: best.cov[0][0] * b2, cross: best.cov[0][1] * b2, scale: best.cov[1][1] * b2 },
  };
}

/**
 * Pitch the model plays at a voltage, Hz (HF and low-end terms included).
 *
 * @param model - A fitted model.
 * @param volts - Control voltage, V, finite.
 * @example modelHz(model, 0) // model.hzAt0V
 */
export function modelHz(model: CalibrationModelOk, volts: Volts): Hertz {
  if (!Number.isFinite(volts)) throw new RangeError(`volts must be a finite number, got ${volts}`);
  return solveHz(model.parameters, volts);
}

/**
 * Pitch of the model's straight-line part at a voltage (HF and low-end terms left out), Hz: what the unit
 * would play with its HF error compensated away. The HF trim's target reading.
 *
 * @param model - A fitted model.
 * @param volts - Control voltage, V, finite.
 * @example lineHz(model, 6) // 2^((a + 1200·6 + e·6)/1200)
 */
export function lineHz(model: CalibrationModelOk, volts: Volts): Hertz {
  if (!Number.isFinite(volts)) throw new RangeError(`volts must be a finite number, got ${volts}`);
  const p = model.parameters;
  return Math.pow(2, (p.offsetCents + (CENTS_PER_OCTAVE + p.scaleErrorCentsPerOctave) * volts) / 1200);
}

/**
 * The HF term alone at a pitch, cents (≤ 0 for droop): `h(f)` of the module comment.
 *
 * @param model - A fitted model.
 * @param hz - Pitch, Hz, > 0.
 * @example hfCents(model, 4186) // −14.5… for a 2 µs equivalent reset time
 */
export function hfCents(model: CalibrationModelOk, hz: Hertz): Cents {
  if (!(hz > 0)) throw new RangeError(`hz must be a finite number greater than 0, got ${hz}`);
  const p = model.parameters;
  const q = 1 - hz * p.resetSeconds;
  return CENTS_PER_OCTAVE * Math.log2(q) - (CENTS_PER_NEPER * p.bulkAlphaSeconds * hz) / q;
}

/**
 * Voltage the model says a pitch corresponds to, V (the inverse of {@link modelHz}).
 *
 * @param model - A fitted model.
 * @param hz - Pitch, Hz, > 0.
 * @example modelVolts(model, model.hzAt0V) // 0.000…
 */
export function modelVolts(model: CalibrationModelOk, hz: Hertz): Volts {
  if (!(hz > 0)) throw new RangeError(`hz must be a finite number greater than 0, got ${hz}`);
  return voltsForHz(model.parameters, hz);
}

/**
 * Sensitivity coefficients of the model's pitch at a voltage (cents) to each used step's cents, in the
 * order of `usedIndices`: `∂y(V)/∂y_j` (first order, JCGM 100:2008 §5.1.3). Sum to 1 (a shift common to
 * every step moves every prediction alike).
 *
 * @param model - A fitted model.
 * @param volts - Control voltage, V, finite.
 * @example predictionSensitivities(model, 0) // [0.93…, 0.21…, …]
 */
export function predictionSensitivities(model: CalibrationModelOk, volts: Volts): number[] {
  const hz = modelHz(model, volts);
  const g = modelGradient(model.terms, model.parameters, volts, hz);
  return model.usedIndices.map((_, j) => g.reduce((s, gk, k) => s + gk * model.gain[k][j], 0));
}

/**
 * Sensitivity coefficients of the scale error (cents per octave) to each used step's cents, in the order of
 * `usedIndices`. Sum to 0: a shift common to every step (a clock error) leaves the scale alone.
 *
 * @param model - A fitted model.
 * @example scaleSensitivities(model) // [−0.08…, −0.05…, …]
 */
export function scaleSensitivities(model: CalibrationModelOk): number[] {
  return model.gain[1].slice();
}

/** Why a set of steps cannot be trusted for trimming. */
export interface ModelRefusal {
  readonly kind: 'refuse';
  /**
   * - `falling-pitch`: the pitch falls as the voltage rises (points in the wrong order, or played downwards);
   * - `implausible-scale`: the octaves per volt are far from 1 (volts in the wrong unit, half-volt steps
   *   given as whole volts, or not a 1 V/oct input);
   * - `inconsistent-steps`: after leaving out the suspect steps the rest still disagree with any smooth
   *   tracking curve.
   */
  readonly reason: 'falling-pitch' | 'implausible-scale' | 'inconsistent-steps';
  /** One line naming the likely cause. */
  readonly message: string;
}

/**
 * Largest scale error taken as a real unit's, cents per octave: 100 (8.3 %). A 1 V/oct converter even badly
 * out of trim is within a few percent (common practice, no source); beyond that the voltages are wrong.
 */
export const MAX_PLAUSIBLE_SCALE_ERROR_CENTS: Cents = 100;

/**
 * The plausibility gates a recording or run must pass before any trim is advised: the pitch must rise with
 * the voltage, the scale must be within ±{@link MAX_PLAUSIBLE_SCALE_ERROR_CENTS} cents per octave of
 * 1 V/oct, and the steps the model uses must agree with it to within 10 cents and 10 combined σ. Returns
 * null when all pass.
 *
 * @param model - A fitted model.
 * @example checkPlausibility(fitCalibrationModel(stepsInReverseOrder)) // { kind: 'refuse', reason: 'falling-pitch', … }
 */
export function checkPlausibility(model: CalibrationModelOk): ModelRefusal | null {
  const line = model.straightLine;
  const slope = line?.octavesPerVolt ?? model.octavesPerVolt;
  if (!(slope > 0) || !(model.octavesPerVolt > 0)) {
    return {
      kind: 'refuse',
      reason: 'falling-pitch',
      message:
        `The pitch falls as the voltage rises (${slope.toFixed(2)} octaves per volt): the voltages are probably ` +
        'given in the wrong order, or the steps were played downwards. Give the voltages in the order they were played.',
    };
  }
  const e = Math.abs(model.scaleErrorCentsPerOctave);
  if (e > MAX_PLAUSIBLE_SCALE_ERROR_CENTS) {
    const s = model.octavesPerVolt;
    let cause = 'check that the voltages are in volts, in the order played, and that this is a 1 V/oct input';
    if (Math.abs(s - 0.5) < 0.1) cause = 'were half-volt steps given as whole volts?';
    else if (Math.abs(s - 2) < 0.3) cause = 'were whole-volt steps given as half volts?';
    else if (Math.abs(s - 1 / 1.2) < 0.05) cause = 'is this a 1.2 V/oct input?';
    return {
      kind: 'refuse',
      reason: 'implausible-scale',
      message:
        `The pitch changes by ${s.toFixed(3)} octaves per volt, far from 1 V/oct (${model.scaleErrorCentsPerOctave.toFixed(0)} cents per octave): ` +
        `${cause} No trim is advised from these steps.`,
    };
  }
  let worst = 0;
  let worstIdx = -1;
  for (const i of model.usedIndices) {
    const r = Math.abs(model.residualsCents[i]);
    if (r > worst) {
      worst = r;
      worstIdx = i;
    }
  }
  if (worstIdx >= 0 && worst > 10 && model.birgeRatio > 10) {
    return {
      kind: 'refuse',
      reason: 'inconsistent-steps',
      message:
        `The steps disagree with any smooth tracking curve by up to ${worst.toFixed(1)} cents (step ${worstIdx + 1}): ` +
        'check each voltage at the input jack, the cable and the order of the voltages, then measure again.',
    };
  }
  return null;
}

/**
 * Sensitivity coefficients of the HF term at a voltage (cents, the model's pitch minus its straight-line
 * part there) to each used step's cents, in the order of `usedIndices`. All zero when the model has no HF term.
 *
 * @param model - A fitted model.
 * @param volts - Control voltage, V, finite.
 * @example hfSensitivities(model, 6) // [0.4…, −1.1…, …]
 */
export function hfSensitivities(model: CalibrationModelOk, volts: Volts): number[] {
  const hz = modelHz(model, volts);
  const g = modelGradient(model.terms, model.parameters, volts, hz);
  const idx = thetaIndex(model.terms);
  const keep = g.map((x, k) => (k === idx.t || k === idx.alpha ? x : 0));
  return model.usedIndices.map((_, j) => keep.reduce((s, gk, k) => s + gk * model.gain[k][j], 0));
}

/**
 * The low-end term alone at a pitch, cents (≥ 0 for a floor that runs the bottom sharp).
 *
 * @param model - A fitted model.
 * @param hz - Pitch, Hz, > 0.
 * @example lowEndCents(model, 32.7) // 0.8… for a 0.015 Hz floor
 */
export function lowEndCents(model: CalibrationModelOk, hz: Hertz): Cents {
  if (!(hz > 0)) throw new RangeError(`hz must be a finite number greater than 0, got ${hz}`);
  return (CENTS_PER_NEPER * model.parameters.lowEndHz) / hz;
}
