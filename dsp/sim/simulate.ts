/**
 * A simulated analog 1 V/oct oscillator, heard through a simulated audio interface.
 *
 * The model, in the order the signal meets it:
 *
 * 1. **Control voltage** from a schedule of steps (glide, optional overshoot, hold) or, in the streaming
 *    form, from the caller block by block.
 * 2. **Exponential converter**: `f_expo = hz0·2^(s·V + c/1200)`, with `s` the scale in octaves per volt and
 *    `c` the thermal and jitter offsets in cents (warm-up, thermal tail, pitch jitter).
 * 3. **Bulk emitter resistance** R subtracts Ic·R from Vbe (Ebers–Moll). The core's charging current is
 *    proportional to its charging frequency `f_c`, so `ln(f_c/f_expo) = −α·f_c` with `α = R·(Ic/f_c)/VT`
 *    (docs/facts.md, "The exponential converter"). It is solved exactly with the Lambert W function:
 *    `f_c = W(α·f_expo)/α`.
 * 4. **Reset time** t of a sawtooth core adds to every period: `T = 1/f_c + t`, so `f = f_c/(1 + f_c·t)`,
 *    an error of `−1200·log2(1 + f_c·t)` cents (docs/facts.md: 1 µs at 1 kHz is −1.730 cents).
 * 5. **Waveform**: additive synthesis from a double-precision phase accumulator, harmonic amplitudes from
 *    the Fourier series of the ideal shape, only harmonics below the interface's band limit.
 * 6. **Output stage and cable**: amplitude, DC offset, control-voltage feedthrough, mains hum.
 * 7. **Interface**: AC coupling (first-order high-pass), white noise at an SNR, clock error, clipping at
 *    ±1 full scale, Float32 samples.
 *
 * Everything is pure computation on numbers and typed arrays: no platform APIs.
 */
import { MAX_CONTROL_VOLTS } from '../calibration/index.ts';
import type { Cents, Decibels, Hertz, Kelvin, Ohms, Ppm, Seconds, Volts } from '../math/index.ts';

// ---------------------------------------------------------------------------------------------------------
// Types and defaults
// ---------------------------------------------------------------------------------------------------------

/** Waveform of the simulated oscillator's output. */
export type OscillatorShape = 'saw' | 'square' | 'pulse' | 'triangle' | 'sine';

/** The waveforms, in the order a picker would list them. */
export const OSCILLATOR_SHAPES: readonly OscillatorShape[] = ['saw', 'square', 'pulse', 'triangle', 'sine'];

/** How the control voltage moves from one step to the next. */
export type GlideShape = 'linear' | 'exponential';

/**
 * Parameters of the simulated oscillator and of the interface that records it.
 * Every field is optional; the defaults (see {@link DEFAULT_OSCILLATOR_OPTIONS}) make a perfect 1 V/oct
 * oscillator recorded by a clean, AC-coupled 48 kHz interface, so each imperfection is opt-in.
 */
export interface OscillatorOptions {
  /** Frequency of the exponential converter at 0 V, before the HF errors (reset time, bulk resistance), Hz, 0.1…20 000. Default 55. */
  readonly hz0?: Hertz;
  /**
   * Scale of the converter, octaves per volt, 0.5…1.5. Default 1. The error is `1200·(s − 1)` cents per
   * octave (per volt), e.g. 0.997 is −3.6 cents per octave.
   */
  readonly scaleOctPerVolt?: number;
  /** Reset time of the sawtooth core, seconds, 0…1e-4. Default 0. Lengthens each period: `T = 1/f_c + t`. */
  readonly resetSeconds?: Seconds;
  /**
   * Bulk emitter resistance as α in `ln(f_c/f_expo) = −α·f_c`, seconds (1/Hz), 0…1e-3. Default 0.
   * α = R·(Ic/f_c)/VT; {@link bulkResistanceAlpha} computes it from ohms and an operating point.
   */
  readonly bulkAlphaSeconds?: Seconds;
  /**
   * Warm-up drift: pitch offset at power-on relative to the warm pitch, cents, −1200…1200. Default 0.
   * Decays as `warmupCents·exp(−t/warmupTauSeconds)` with t the time since power-on.
   */
  readonly warmupCents?: Cents;
  /** Time constant of the warm-up, seconds, 1…86 400. Default 300. */
  readonly warmupTauSeconds?: Seconds;
  /** Time since power-on at the first sample, seconds, ≥ 0. Default 0 (a cold start). */
  readonly warmupElapsedSeconds?: Seconds;
  /**
   * Thermal tail after a voltage change, cents per volt of change, −100…100. Default 0. The junction's
   * temperature follows the control voltage with a first-order lag, so right after a step of ΔV the pitch is
   * off by `tailCentsPerVolt·ΔV` and creeps back as `exp(−t/tailTauSeconds)`. Negative: starts flat.
   */
  readonly tailCentsPerVolt?: Cents;
  /** Time constant of the thermal tail, seconds, 0.001…600. Default 1. */
  readonly tailTauSeconds?: Seconds;
  /** Pitch jitter, RMS cents of a bounded random walk (Ornstein–Uhlenbeck), 0…100. Default 0. */
  readonly jitterCents?: Cents;
  /** Correlation time of the pitch jitter, seconds, 1e-4…60. Default 0.05. */
  readonly jitterTauSeconds?: Seconds;
  /**
   * White frequency noise, as its Allan deviation at τ = 1 s, cents, 0…10. Default 0. Drawn every
   * millisecond and held (white FM up to 500 Hz, far above any capture's sub-windows).
   */
  readonly whiteFmCents?: Cents;
  /**
   * Flicker frequency noise, as its (flat) Allan deviation, cents, 0…10. Default 0. Made as the sum of
   * {@link FLICKER_TAUS_SECONDS}.length Ornstein–Uhlenbeck processes with time constants four times apart,
   * each of RMS `flickerFmCents`: Lorentzians spaced by a factor 4 sum to S_y ≈ σ²/(f·ln4), whose Allan
   * variance 2·ln2·h₋₁ is σ² (IEEE Std 1139-2008, table 1). Flicker holds between 10 ms and 2.6 s.
   */
  readonly flickerFmCents?: Cents;
  /** Waveform. Default 'saw' (a rising ramp). */
  readonly shape?: OscillatorShape;
  /** Fraction of the period the pulse is high, 0.01…0.99 (only for 'pulse'). Default 0.25. */
  readonly pulseWidth?: number;
  /** Peak of the ideal (unlimited-band) waveform, full-scale units, 0…1. Default 0.5 (−6 dBFS). Band-limited saw and square ring about 9 % above it (Gibbs). */
  readonly amplitude?: number;
  /** DC offset at the interface input, full-scale units, −1…1. Default 0. */
  readonly dcOffset?: number;
  /** Control voltage leaking into the output, full-scale units per volt, −1…1. Default 0. With AC coupling each step shows as a decaying jump. */
  readonly cvFeedthroughPerVolt?: number;
  /** White noise of the interface: signal-to-noise ratio, dB, −20…Infinity, against the ideal waveform's AC power. Default Infinity (none). */
  readonly snrDb?: Decibels;
  /** Mains frequency, Hz, 10…1000 (50 or 60 in practice). Default 50. */
  readonly humHz?: Hertz;
  /** Total mains-hum power (fundamental, 2nd and 3rd harmonic at amplitudes 1, 0.3, 0.2) relative to the ideal waveform's AC power, dB, −Infinity…20. Default −Infinity (none). */
  readonly humDb?: Decibels;
  /** Corner of the interface's AC coupling (first-order high-pass), Hz, 0…200; 0 is DC-coupled. Default 5. */
  readonly acCouplingHz?: Hertz;
  /** Sample rate the recording is labelled with, Hz, 8000…384 000. Default 48 000. */
  readonly sampleRateHz?: Hertz;
  /** Error of the interface's clock, ppm, −10 000…10 000; positive is fast, so every frequency in the recording reads low by the factor 1/(1 + ppm·1e-6). Default 0. */
  readonly clockPpm?: Ppm;
  /** Highest harmonic frequency kept, Hz, (0, 0.5·fs). Default 0.45·fs. Harmonics fade out linearly over the 0.01·fs below it. */
  readonly bandLimitHz?: Hertz;
  /** Most harmonics synthesised, integer 1…2000. Default 200. */
  readonly maxHarmonics?: number;
  /** Seed of the noise and jitter generators, integer. Default 1. */
  readonly seed?: number;
}

/** {@link OscillatorOptions} with every default filled in and checked. */
export type ResolvedOscillatorOptions = {
  readonly [K in keyof OscillatorOptions]-?: NonNullable<OscillatorOptions[K]>;
};

/** The defaults, except `bandLimitHz`, which is 0.45 × the sample rate. */
export const DEFAULT_OSCILLATOR_OPTIONS: Readonly<Omit<ResolvedOscillatorOptions, 'bandLimitHz'>> =
  Object.freeze({
    hz0: 55,
    scaleOctPerVolt: 1,
    resetSeconds: 0,
    bulkAlphaSeconds: 0,
    warmupCents: 0,
    warmupTauSeconds: 300,
    warmupElapsedSeconds: 0,
    tailCentsPerVolt: 0,
    tailTauSeconds: 1,
    jitterCents: 0,
    jitterTauSeconds: 0.05,
    whiteFmCents: 0,
    flickerFmCents: 0,
    shape: 'saw',
    pulseWidth: 0.25,
    amplitude: 0.5,
    dcOffset: 0,
    cvFeedthroughPerVolt: 0,
    snrDb: Infinity,
    humHz: 50,
    humDb: -Infinity,
    acCouplingHz: 5,
    sampleRateHz: 48_000,
    clockPpm: 0,
    maxHarmonics: 200,
    seed: 1,
  });

/** Time constants of the Ornstein–Uhlenbeck processes that make the simulator's flicker FM, seconds. */
export const FLICKER_TAUS_SECONDS: readonly Seconds[] = [0.01, 0.04, 0.16, 0.64, 2.56];
/** Update interval of the simulator's frequency noise, seconds. */
const FM_STEP_SECONDS = 0.001;

/** Fraction of the sample rate kept by default: harmonics at or above 0.45·fs are absent. */
export const DEFAULT_BAND_LIMIT_FRACTION = 0.45;

/** Width of the linear fade-out below the band limit, as a fraction of the sample rate. */
const FADE_FRACTION = 0.01;

/** Relative amplitudes of the mains fundamental and its 2nd and 3rd harmonics, and their phases (rad). */
const HUM_AMPLITUDES = [1, 0.3, 0.2] as const;
const HUM_PHASES = [0, 1, 2] as const;

/** Boltzmann constant over elementary charge, V/K (both exact since the 2019 SI redefinition; BIPM SI Brochure, 9th ed.). */
const K_OVER_Q = 1.380649e-23 / 1.602176634e-19;

// ---------------------------------------------------------------------------------------------------------
// Checking
// ---------------------------------------------------------------------------------------------------------

function requireRange(name: string, value: unknown, min: number, max: number, unit: string): number {
  if (typeof value !== 'number' || Number.isNaN(value) || value < min || value > max) {
    throw new RangeError(
      `${name} must be a number from ${min} to ${max}${unit ? ` ${unit}` : ''}, got ${String(value)}`,
    );
  }
  return value;
}

function requireFiniteRange(name: string, value: unknown, min: number, max: number, unit: string): number {
  const v = requireRange(name, value, min, max, unit);
  if (!Number.isFinite(v)) {
    throw new RangeError(
      `${name} must be a finite number from ${min} to ${max}${unit ? ` ${unit}` : ''}, got ${v}`,
    );
  }
  return v;
}

function requireInteger(name: string, value: unknown, min: number, max: number): number {
  if (typeof value !== 'number' || !Number.isInteger(value) || value < min || value > max) {
    throw new RangeError(`${name} must be an integer from ${min} to ${max}, got ${String(value)}`);
  }
  return value;
}

/**
 * Fills in the defaults of {@link OscillatorOptions} and checks every field.
 *
 * @param options - Partial options; unknown fields are ignored.
 * @returns Every field set.
 * @throws RangeError naming the field, its value and the allowed range, e.g.
 *   `scaleOctPerVolt must be a number from 0.5 to 1.5 octaves per volt, got 3`.
 * @example resolveOscillatorOptions({ sampleRateHz: 44_100 }).bandLimitHz // 19845
 */
export function resolveOscillatorOptions(options: OscillatorOptions = {}): ResolvedOscillatorOptions {
  const o = { ...DEFAULT_OSCILLATOR_OPTIONS, ...stripUndefined(options) };
  const sampleRateHz = requireFiniteRange('sampleRateHz', o.sampleRateHz, 8000, 384_000, 'Hz');
  const bandLimitHz =
    options.bandLimitHz === undefined ? DEFAULT_BAND_LIMIT_FRACTION * sampleRateHz : options.bandLimitHz;
  if (typeof bandLimitHz !== 'number' || !(bandLimitHz > 0 && bandLimitHz < sampleRateHz / 2)) {
    throw new RangeError(
      `bandLimitHz must be a number above 0 and below half the sample rate (${sampleRateHz / 2} Hz), got ${String(bandLimitHz)}`,
    );
  }
  if (!OSCILLATOR_SHAPES.includes(o.shape)) {
    throw new RangeError(`shape must be one of ${OSCILLATOR_SHAPES.join(', ')}, got ${String(o.shape)}`);
  }
  return Object.freeze({
    hz0: requireFiniteRange('hz0', o.hz0, 0.1, 20_000, 'Hz'),
    scaleOctPerVolt: requireFiniteRange('scaleOctPerVolt', o.scaleOctPerVolt, 0.5, 1.5, 'octaves per volt'),
    resetSeconds: requireFiniteRange('resetSeconds', o.resetSeconds, 0, 1e-4, 's'),
    bulkAlphaSeconds: requireFiniteRange('bulkAlphaSeconds', o.bulkAlphaSeconds, 0, 1e-3, 's'),
    warmupCents: requireFiniteRange('warmupCents', o.warmupCents, -1200, 1200, 'cents'),
    warmupTauSeconds: requireFiniteRange('warmupTauSeconds', o.warmupTauSeconds, 1, 86_400, 's'),
    warmupElapsedSeconds: requireFiniteRange('warmupElapsedSeconds', o.warmupElapsedSeconds, 0, 1e9, 's'),
    tailCentsPerVolt: requireFiniteRange('tailCentsPerVolt', o.tailCentsPerVolt, -100, 100, 'cents per volt'),
    tailTauSeconds: requireFiniteRange('tailTauSeconds', o.tailTauSeconds, 0.001, 600, 's'),
    jitterCents: requireFiniteRange('jitterCents', o.jitterCents, 0, 100, 'cents'),
    jitterTauSeconds: requireFiniteRange('jitterTauSeconds', o.jitterTauSeconds, 1e-4, 60, 's'),
    whiteFmCents: requireFiniteRange('whiteFmCents', o.whiteFmCents, 0, 10, 'cents'),
    flickerFmCents: requireFiniteRange('flickerFmCents', o.flickerFmCents, 0, 10, 'cents'),
    shape: o.shape,
    pulseWidth: requireFiniteRange('pulseWidth', o.pulseWidth, 0.01, 0.99, ''),
    amplitude: requireFiniteRange('amplitude', o.amplitude, 0, 1, 'full scale'),
    dcOffset: requireFiniteRange('dcOffset', o.dcOffset, -1, 1, 'full scale'),
    cvFeedthroughPerVolt: requireFiniteRange(
      'cvFeedthroughPerVolt',
      o.cvFeedthroughPerVolt,
      -1,
      1,
      'full scale per volt',
    ),
    snrDb: requireRange('snrDb', o.snrDb, -20, Infinity, 'dB'),
    humHz: requireFiniteRange('humHz', o.humHz, 10, 1000, 'Hz'),
    humDb: requireRange('humDb', o.humDb, -Infinity, 20, 'dB'),
    acCouplingHz: requireFiniteRange('acCouplingHz', o.acCouplingHz, 0, 200, 'Hz'),
    sampleRateHz,
    clockPpm: requireFiniteRange('clockPpm', o.clockPpm, -10_000, 10_000, 'ppm'),
    bandLimitHz,
    maxHarmonics: requireInteger('maxHarmonics', o.maxHarmonics, 1, 2000),
    seed: requireInteger('seed', o.seed, -(2 ** 53), 2 ** 53),
  });
}

function stripUndefined<T extends object>(o: T): Partial<T> {
  const out: Partial<T> = {};
  for (const k of Object.keys(o) as (keyof T)[]) if (o[k] !== undefined) out[k] = o[k];
  return out;
}

// ---------------------------------------------------------------------------------------------------------
// Physics
// ---------------------------------------------------------------------------------------------------------

/**
 * Principal branch of the Lambert W function for z ≥ 0: the w with `w·e^w = z` (Halley's iteration;
 * Corless et al., "On the Lambert W function", Adv. Comput. Math. 5, 1996).
 */
function lambertW0(z: number, guess = Number.NaN): number {
  if (z === 0) return 0;
  let w =
    Number.isFinite(guess) && guess > 0 ? guess : z < 3 ? Math.log1p(z) : Math.log(z) - Math.log(Math.log(z));
  for (let i = 0; i < 40; i++) {
    const ew = Math.exp(w);
    const f = w * ew - z;
    const wp1 = w + 1;
    const dw = f / (ew * wp1 - ((w + 2) * f) / (2 * wp1));
    w -= dw;
    if (Math.abs(dw) <= 1e-16 * (1 + Math.abs(w))) break;
  }
  return w;
}

/**
 * Frequency after the converter, the bulk resistance and the reset time (steps 2–4 of the model).
 * `wState[0]` carries the last Lambert W value in and out, as the starting guess of the next solve.
 */
function modelHz(
  hz0: number,
  scale: number,
  alpha: number,
  reset: number,
  volts: number,
  offsetCents: number,
  wState: Float64Array | null,
): number {
  const expoHz = hz0 * Math.pow(2, scale * volts + offsetCents / 1200);
  let chargeHz = expoHz;
  if (alpha > 0) {
    const w = lambertW0(alpha * expoHz, wState === null ? NaN : wState[0]);
    if (wState !== null) wState[0] = w;
    chargeHz = w / alpha;
  }
  return chargeHz / (1 + chargeHz * reset);
}

/**
 * Frequency of a perfect 1 V/oct oscillator with the same 0 V pitch: `hz0·2^V`.
 *
 * @param volts - Control voltage, V, finite.
 * @param options - Only `hz0` is used (default 55 Hz).
 * @example idealHz(3, { hz0: 55 }) // 440
 */
export function idealHz(volts: Volts, options: OscillatorOptions = {}): Hertz {
  const o = resolveOscillatorOptions(options);
  requireFiniteRange('volts', volts, -1e3, 1e3, 'V');
  return o.hz0 * Math.pow(2, volts);
}

/** Pitch offsets of thermal origin, applied at the exponential converter (before the HF errors). */
export interface ThermalState {
  /** Warm-up drift, cents (see {@link warmupDriftCents}). Default 0. */
  readonly driftCents?: Cents;
  /** Thermal tail after a voltage change, cents. Default 0 (settled). */
  readonly tailCents?: Cents;
}

/**
 * The oscillator's true output frequency at a steady control voltage, excluding noise and jitter:
 * `f_expo = hz0·2^(s·V + (drift + tail)/1200)`, then bulk resistance `f_c = W(α·f_expo)/α` (so that
 * `ln(f_c/f_expo) = −α·f_c`), then reset time `f = f_c/(1 + f_c·t)` (docs/facts.md, "The exponential
 * converter"; the Lambert W solution is derived). This is the physical frequency; a recording made with a
 * clock error `clockPpm` shows it at `f/(1 + clockPpm·1e-6)`.
 *
 * @param volts - Control voltage, V, finite.
 * @param options - Oscillator options (see {@link OscillatorOptions}).
 * @param tempState - Thermal offsets; default none (warm and settled).
 * @example trueHz(0, { hz0: 1000, resetSeconds: 1e-6 }) // 999.000999… (−1.730 cents)
 */
export function trueHz(volts: Volts, options: OscillatorOptions = {}, tempState: ThermalState = {}): Hertz {
  const o = resolveOscillatorOptions(options);
  requireFiniteRange('volts', volts, -1e3, 1e3, 'V');
  const drift = requireFiniteRange('tempState.driftCents', tempState.driftCents ?? 0, -1e4, 1e4, 'cents');
  const tail = requireFiniteRange('tempState.tailCents', tempState.tailCents ?? 0, -1e4, 1e4, 'cents');
  return modelHz(o.hz0, o.scaleOctPerVolt, o.bulkAlphaSeconds, o.resetSeconds, volts, drift + tail, null);
}

/**
 * α of the bulk emitter resistance for {@link OscillatorOptions.bulkAlphaSeconds}: `α = R·(Ic/f)/VT` with
 * `VT = kT/q` (Ebers–Moll; k and q exact, BIPM SI Brochure 9th ed.). The pitch error at that operating point
 * is `−1200·Ic·R/(VT·ln2)` cents (docs/facts.md: 1 Ω at 100 µA is −6.7 cents).
 *
 * @param ohms - Bulk emitter resistance, Ω, 0…1000.
 * @param amps - Collector current at the operating point, A, > 0.
 * @param atHz - Core frequency at that current, Hz, > 0.
 * @param kelvin - Junction temperature, K, 200…400. Default 298.15 (25 °C).
 * @example bulkResistanceAlpha(1, 100e-6, 1000) // 3.892e-6 s (−6.738 cents at 1 kHz)
 */
export function bulkResistanceAlpha(ohms: Ohms, amps: number, atHz: Hertz, kelvin: Kelvin = 298.15): Seconds {
  requireFiniteRange('ohms', ohms, 0, 1000, 'ohms');
  requireFiniteRange('amps', amps, 1e-12, 1, 'A');
  requireFiniteRange('atHz', atHz, 1e-3, 1e6, 'Hz');
  requireFiniteRange('kelvin', kelvin, 200, 400, 'K');
  return (ohms * (amps / atHz)) / (K_OVER_Q * kelvin);
}

/**
 * Warm-up drift at a time since power-on: `warmupCents·exp(−t/warmupTauSeconds)` cents (an exponential
 * approach to the warm pitch; the shape is common practice, no source).
 *
 * @param secondsSincePowerOn - Time since power-on, s, ≥ 0.
 * @param options - Uses `warmupCents` and `warmupTauSeconds`.
 * @example warmupDriftCents(300, { warmupCents: -10, warmupTauSeconds: 300 }) // −3.679
 */
export function warmupDriftCents(secondsSincePowerOn: Seconds, options: OscillatorOptions = {}): Cents {
  const o = resolveOscillatorOptions(options);
  requireFiniteRange('secondsSincePowerOn', secondsSincePowerOn, 0, 1e9, 's');
  return o.warmupCents * Math.exp(-secondsSincePowerOn / o.warmupTauSeconds);
}

/**
 * Time since power-on after which the warm-up drift rate stays below a threshold:
 * `τ·ln(|W|·60/(τ·r))` for a rate r in cents per minute (derived from {@link warmupDriftCents}). docs/facts.md
 * gives 0.1 cent per minute as the usual "warm" criterion (common practice).
 *
 * @param options - Uses `warmupCents` and `warmupTauSeconds`.
 * @param centsPerMinute - Drift-rate threshold, cents/min, > 0. Default 0.1.
 * @returns Seconds since power-on (0 if the drift is already slower at power-on).
 * @example warmupSecondsUntil({ warmupCents: -14, warmupTauSeconds: 420 }) // 1258.2 (about 21 minutes)
 */
export function warmupSecondsUntil(options: OscillatorOptions = {}, centsPerMinute = 0.1): Seconds {
  const o = resolveOscillatorOptions(options);
  requireFiniteRange('centsPerMinute', centsPerMinute, 1e-9, 1e6, 'cents per minute');
  const initialRate = (Math.abs(o.warmupCents) * 60) / o.warmupTauSeconds;
  return initialRate <= centsPerMinute ? 0 : o.warmupTauSeconds * Math.log(initialRate / centsPerMinute);
}

// ---------------------------------------------------------------------------------------------------------
// Waveforms
// ---------------------------------------------------------------------------------------------------------

/**
 * Fourier coefficients of harmonic k of the ideal unit-peak waveform, as `{ sin, cos }` amplitudes of
 * `sin(kθ)` and `cos(kθ)`, θ = 2π·phase (handbook series, e.g. Oppenheim & Willsky, "Signals and Systems"):
 * rising saw `2·phase − 1`: −2/(πk); square (high for the first half): 4/(πk), odd k; triangle (peak at a
 * quarter period): 8/(π²k²)·(−1)^((k−1)/2), odd k; pulse high for the first fraction d:
 * sin 2(1 − cos 2πkd)/(πk), cos 2·sin(2πkd)/(πk).
 *
 * @param shape - Waveform.
 * @param k - Harmonic number, integer ≥ 1.
 * @param pulseWidth - Pulse width d, 0…1 (pulse only). Default 0.25.
 * @example harmonicCoefficients('square', 3) // { sin: 0.4244…, cos: 0 }
 */
export function harmonicCoefficients(
  shape: OscillatorShape,
  k: number,
  pulseWidth = 0.25,
): { readonly sin: number; readonly cos: number } {
  requireInteger('k', k, 1, 1e6);
  switch (shape) {
    case 'sine':
      return { sin: k === 1 ? 1 : 0, cos: 0 };
    case 'saw':
      return { sin: -2 / (Math.PI * k), cos: 0 };
    case 'square':
      return { sin: k % 2 === 1 ? 4 / (Math.PI * k) : 0, cos: 0 };
    case 'triangle':
      return {
        sin: k % 2 === 1 ? ((((k - 1) / 2) % 2 === 0 ? 1 : -1) * 8) / (Math.PI * Math.PI * k * k) : 0,
        cos: 0,
      };
    case 'pulse': {
      const a = 2 * Math.PI * k * pulseWidth;
      return { sin: (2 * (1 - Math.cos(a))) / (Math.PI * k), cos: (2 * Math.sin(a)) / (Math.PI * k) };
    }
  }
}

/**
 * Mean (DC) of the ideal unit-peak waveform: `2d − 1` for a pulse of width d, 0 otherwise.
 *
 * @example shapeMean('pulse', 0.25) // −0.5
 */
export function shapeMean(shape: OscillatorShape, pulseWidth = 0.25): number {
  return shape === 'pulse' ? 2 * pulseWidth - 1 : 0;
}

/**
 * AC power (mean square without the mean) of the ideal unit-peak waveform: saw and triangle 1/3, square 1,
 * sine 1/2, pulse 4d(1 − d) (from the waveforms' definitions). The SNR and hum levels refer to this power
 * times amplitude².
 *
 * @example shapePower('saw') // 0.3333…
 */
export function shapePower(shape: OscillatorShape, pulseWidth = 0.25): number {
  switch (shape) {
    case 'saw':
    case 'triangle':
      return 1 / 3;
    case 'square':
      return 1;
    case 'sine':
      return 0.5;
    case 'pulse':
      return 4 * pulseWidth * (1 - pulseWidth);
  }
}

// ---------------------------------------------------------------------------------------------------------
// Random numbers (seeded, allocation-free)
// ---------------------------------------------------------------------------------------------------------

/** Mulberry32 uniform generator (public domain) with Box–Muller normal deviates. */
class Gaussian {
  private state: number;
  private spare = 0;
  private hasSpare = false;
  constructor(seed: number) {
    this.state = seed >>> 0;
  }
  private uniform(): number {
    this.state = (this.state + 0x6d2b79f5) >>> 0;
    let t = this.state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  }
  next(): number {
    if (this.hasSpare) {
      this.hasSpare = false;
      return this.spare;
    }
    const u1 = Math.max(this.uniform(), 1e-300);
    const u2 = this.uniform();
    const m = Math.sqrt(-2 * Math.log(u1));
    this.spare = m * Math.sin(2 * Math.PI * u2);
    this.hasSpare = true;
    return m * Math.cos(2 * Math.PI * u2);
  }
}

// ---------------------------------------------------------------------------------------------------------
// Streaming renderer
// ---------------------------------------------------------------------------------------------------------

/**
 * A running simulated oscillator for the live demo: call {@link OscillatorStream.render} block after block.
 * It allocates its tables once, at creation; rendering allocates nothing and never throws.
 */
export interface OscillatorStream {
  /** The options in force, defaults filled in. */
  readonly options: ResolvedOscillatorOptions;
  /** Sample rate of the rendered blocks, Hz. */
  readonly sampleRateHz: Hertz;
  /** Samples rendered so far. */
  readonly samplesRendered: number;
  /** Time since power-on at the next sample, seconds (`warmupElapsedSeconds` + rendered time). */
  readonly secondsSincePowerOn: Seconds;
  /** True physical frequency at the last rendered sample, jitter and thermal state included, Hz (NaN before the first block). */
  readonly currentHz: Hertz;
  /** Control voltage at the last rendered sample, V (NaN before the first block). */
  readonly currentVolts: Volts;
  /**
   * Fills `out` with the next `out.length` samples.
   *
   * @param out - Destination, written from index 0; values in −1…1.
   * @param controlVolts - A voltage held for the whole block, or one voltage per sample (if shorter than
   *   `out`, its last value is held). A non-finite value holds the previous voltage.
   */
  render(out: Float32Array, controlVolts: Volts | ArrayLike<number>): void;
  /** Back to the state at creation (phase, thermal state, filters and random generators). */
  reset(): void;
}

class OscillatorStreamImpl implements OscillatorStream {
  readonly options: ResolvedOscillatorOptions;
  readonly sampleRateHz: Hertz;
  // Fixed tables and constants.
  private readonly sinCoef: Float64Array;
  private readonly cosCoef: Float64Array;
  private readonly stride: number;
  private readonly usesCos: boolean;
  private readonly apparentScale: number; // 1/(1 + ppm·1e-6)
  private readonly invFs: number;
  private readonly fadeHz: number;
  private readonly dcPerVolt: number;
  private readonly dcFixed: number;
  private readonly noiseSigma: number;
  private readonly humAmp: number;
  private readonly humInc: number;
  private readonly hpC: number;
  private readonly hpD: number;
  private readonly tailK: number;
  private readonly jitterRho: number;
  private readonly jitterKick: number;
  private readonly fmEvery: number;
  private readonly flickerRho: Float64Array;
  private readonly flickerKick: Float64Array;
  private readonly flicker: Float64Array;
  private readonly whiteFmSigma: number;
  private fmRng!: Gaussian;
  private fmCents = 0;
  private fmCountdown = 0;
  // State.
  private noise!: Gaussian;
  private jitterRng!: Gaussian;
  private n = 0;
  private phase = 0;
  private volts = NaN;
  private lagVolts = NaN;
  private jitter = 0;
  private hpX = 0;
  private hpY = 0;
  private readonly w = new Float64Array(1);
  private lastHz = NaN;

  constructor(options: OscillatorOptions) {
    const o = resolveOscillatorOptions(options);
    this.options = o;
    this.sampleRateHz = o.sampleRateHz;
    const fs = o.sampleRateHz;
    this.invFs = 1 / fs;
    this.apparentScale = 1 / (1 + o.clockPpm * 1e-6);
    this.fadeHz = FADE_FRACTION * fs;
    const H = o.shape === 'sine' ? 1 : o.maxHarmonics;
    this.sinCoef = new Float64Array(H + 1);
    this.cosCoef = new Float64Array(H + 1);
    for (let k = 1; k <= H; k++) {
      const c = harmonicCoefficients(o.shape, k, o.pulseWidth);
      this.sinCoef[k] = c.sin * o.amplitude;
      this.cosCoef[k] = c.cos * o.amplitude;
    }
    this.usesCos = o.shape === 'pulse';
    this.stride = o.shape === 'square' || o.shape === 'triangle' ? 2 : 1;
    this.dcPerVolt = o.cvFeedthroughPerVolt;
    this.dcFixed = o.dcOffset + o.amplitude * shapeMean(o.shape, o.pulseWidth);
    const signalPower = o.amplitude * o.amplitude * shapePower(o.shape, o.pulseWidth);
    this.noiseSigma = Number.isFinite(o.snrDb) ? Math.sqrt(signalPower / Math.pow(10, o.snrDb / 10)) : 0;
    const humPower = signalPower * Math.pow(10, o.humDb / 10);
    const humUnitPower = HUM_AMPLITUDES.reduce((s, a) => s + (a * a) / 2, 0);
    this.humAmp = Math.sqrt(humPower / humUnitPower);
    this.humInc = o.humHz * this.apparentScale * this.invFs;
    // AC coupling: first-order RC high-pass H(s) = s/(s + ωc) by the bilinear transform with the corner
    // prewarped (K = tan(π·fc/fs)), so the digital filter is exactly −3 dB at fc.
    if (o.acCouplingHz > 0) {
      const K = Math.tan((Math.PI * o.acCouplingHz) / fs);
      this.hpC = 1 / (1 + K);
      this.hpD = (1 - K) / (1 + K);
    } else {
      this.hpC = 1;
      this.hpD = 0;
    }
    this.tailK = 1 - Math.exp(-1 / (fs * o.tailTauSeconds));
    // Ornstein–Uhlenbeck process sampled exactly: x ← ρ·x + σ·√(1 − ρ²)·N(0, 1).
    this.jitterRho = Math.exp(-1 / (fs * o.jitterTauSeconds));
    this.jitterKick = o.jitterCents * Math.sqrt(1 - this.jitterRho * this.jitterRho);
    // Frequency noise, updated every millisecond (`fmEvery` samples) and held. White FM held over Δ
    // has Allan variance σ²Δ/τ, so σ = ADEV(1 s)/√Δ.
    this.fmEvery = Math.max(1, Math.round(fs * FM_STEP_SECONDS));
    const dt = this.fmEvery / fs;
    this.whiteFmSigma = o.whiteFmCents / Math.sqrt(dt);
    this.flickerRho = new Float64Array(FLICKER_TAUS_SECONDS.length);
    this.flickerKick = new Float64Array(FLICKER_TAUS_SECONDS.length);
    this.flicker = new Float64Array(FLICKER_TAUS_SECONDS.length);
    FLICKER_TAUS_SECONDS.forEach((tau, i) => {
      this.flickerRho[i] = Math.exp(-dt / tau);
      this.flickerKick[i] = o.flickerFmCents * Math.sqrt(1 - this.flickerRho[i] ** 2);
    });
    this.reset();
  }

  get samplesRendered(): number {
    return this.n;
  }
  get secondsSincePowerOn(): Seconds {
    return this.options.warmupElapsedSeconds + this.n * this.invFs;
  }
  get currentHz(): Hertz {
    return this.lastHz;
  }
  get currentVolts(): Volts {
    return this.n === 0 ? NaN : this.volts;
  }

  reset(): void {
    const seed = this.options.seed;
    this.noise = new Gaussian(seed);
    this.jitterRng = new Gaussian((seed ^ 0x9e3779b9) + 1);
    this.n = 0;
    this.phase = 0;
    this.volts = NaN;
    this.lagVolts = NaN;
    this.jitter = 0;
    this.fmRng = new Gaussian((seed ^ 0x5bd1e995) + 7);
    // Start the flicker processes in their stationary state, so the noise is the same from the first sample.
    for (let i = 0; i < this.flicker.length; i++)
      this.flicker[i] = this.options.flickerFmCents * this.fmRng.next();
    this.fmCents = 0;
    this.fmCountdown = 0;
    this.hpX = 0;
    this.hpY = 0;
    this.w[0] = NaN;
    this.lastHz = NaN;
  }

  render(out: Float32Array, controlVolts: Volts | ArrayLike<number>): void {
    const o = this.options;
    const len = out.length;
    const perSample = typeof controlVolts !== 'number';
    const cvLen = perSample ? controlVolts.length : 0;
    const fixedCv = perSample ? NaN : controlVolts;
    const { hz0, scaleOctPerVolt: scale, bulkAlphaSeconds: alpha, resetSeconds: reset } = o;
    const warmCents = o.warmupCents;
    const warmRate = 1 / o.warmupTauSeconds;
    const tailPerVolt = o.tailCentsPerVolt;
    const hasJitter = o.jitterCents > 0;
    const hasFm = o.whiteFmCents > 0 || o.flickerFmCents > 0;
    const limit = o.bandLimitHz;
    const fade = this.fadeHz;
    const fullLimit = limit - fade;
    const maxH = this.sinCoef.length - 1;
    const stride = this.stride;
    const sinCoef = this.sinCoef;
    const cosCoef = this.cosCoef;
    const usesCos = this.usesCos;
    const acOn = o.acCouplingHz > 0;
    const humOn = this.humAmp > 0;
    const noiseOn = this.noiseSigma > 0;
    const twoPi = 2 * Math.PI;
    for (let i = 0; i < len; i++) {
      // Control voltage.
      let v = perSample ? (cvLen === 0 ? NaN : controlVolts[i < cvLen ? i : cvLen - 1]) : fixedCv;
      if (!Number.isFinite(v)) v = Number.isFinite(this.volts) ? this.volts : 0;
      if (this.n === 0) {
        this.lagVolts = v;
        // The interface has seen this DC forever: no start-up transient from it.
        this.hpX = this.dcFixed + this.dcPerVolt * v;
      }
      this.volts = v;
      // Thermal state: tail from the lagging junction temperature, warm-up, jitter.
      const tail = tailPerVolt * (v - this.lagVolts);
      this.lagVolts += (v - this.lagVolts) * this.tailK;
      let offset = tail;
      if (warmCents !== 0)
        offset += warmCents * Math.exp(-(o.warmupElapsedSeconds + this.n * this.invFs) * warmRate);
      if (hasJitter) {
        this.jitter = this.jitter * this.jitterRho + this.jitterKick * this.jitterRng.next();
        offset += this.jitter;
      }
      if (hasFm) {
        if (this.fmCountdown <= 0) {
          this.fmCountdown = this.fmEvery;
          let c = this.whiteFmSigma > 0 ? this.whiteFmSigma * this.fmRng.next() : 0;
          for (let q = 0; q < this.flicker.length; q++) {
            this.flicker[q] = this.flicker[q] * this.flickerRho[q] + this.flickerKick[q] * this.fmRng.next();
            c += this.flicker[q];
          }
          this.fmCents = c;
        }
        this.fmCountdown--;
        offset += this.fmCents;
      }
      // Frequency (physical) and as recorded.
      const hz = modelHz(hz0, scale, alpha, reset, v, offset, this.w);
      this.lastHz = hz;
      const f = hz * this.apparentScale;
      // Band-limited waveform at the current phase.
      let wave = 0;
      const kTop = Math.min(maxH, Math.ceil(limit / f) - 1);
      if (kTop >= 1) {
        const th = twoPi * this.phase;
        const s1 = Math.sin(th);
        const c1 = Math.cos(th);
        // Chebyshev recurrence over k, k + stride, …: x_{k+s} = 2cos(sθ)·x_k − x_{k−s}.
        const cs = stride === 1 ? c1 : 2 * c1 * c1 - 1;
        const twoCs = 2 * cs;
        let sPrev = stride === 1 ? 0 : -s1;
        let sCur = s1;
        let cPrev = stride === 1 ? 1 : c1;
        let cCur = c1;
        for (let k = 1; k <= kTop; k += stride) {
          const hf = k * f;
          const g = hf <= fullLimit ? 1 : (limit - hf) / fade;
          wave += g * (usesCos ? sinCoef[k] * sCur + cosCoef[k] * cCur : sinCoef[k] * sCur);
          const sNext = twoCs * sCur - sPrev;
          sPrev = sCur;
          sCur = sNext;
          if (usesCos) {
            const cNext = twoCs * cCur - cPrev;
            cPrev = cCur;
            cCur = cNext;
          }
        }
      }
      this.phase += f * this.invFs;
      if (this.phase >= 1) this.phase -= Math.floor(this.phase);
      // Output stage, cable and hum.
      let x = wave + this.dcFixed + this.dcPerVolt * v;
      if (humOn) {
        const hp = twoPi * ((this.n * this.humInc) % 1);
        x +=
          this.humAmp *
          (HUM_AMPLITUDES[0] * Math.sin(hp + HUM_PHASES[0]) +
            HUM_AMPLITUDES[1] * Math.sin(2 * hp + HUM_PHASES[1]) +
            HUM_AMPLITUDES[2] * Math.sin(3 * hp + HUM_PHASES[2]));
      }
      // Interface: AC coupling, self-noise, clipping.
      let y = x;
      if (acOn) {
        y = this.hpC * (x - this.hpX) + this.hpD * this.hpY;
        this.hpX = x;
        this.hpY = y;
      }
      if (noiseOn) y += this.noiseSigma * this.noise.next();
      out[i] = y > 1 ? 1 : y < -1 ? -1 : y;
      this.n++;
    }
  }
}

/**
 * Creates a running simulated oscillator for live use (see {@link OscillatorStream}). The same engine renders
 * {@link renderOscillator}, so a stream fed the same control voltages produces the same samples.
 *
 * @param options - Oscillator and interface options.
 * @throws RangeError for an invalid option (see {@link resolveOscillatorOptions}).
 * @example
 * const osc = createOscillatorStream({ hz0: 110 });
 * const block = new Float32Array(128);
 * osc.render(block, 2); // 128 samples of a 440 Hz saw
 */
export function createOscillatorStream(options: OscillatorOptions = {}): OscillatorStream {
  return new OscillatorStreamImpl(options);
}

// ---------------------------------------------------------------------------------------------------------
// Voltage schedules and batch rendering
// ---------------------------------------------------------------------------------------------------------

/**
 * One step of a control-voltage schedule: glide from the previous voltage (towards `volts` plus any
 * overshoot), return from the overshoot, then hold. The first segment starts from its own voltage.
 */
export interface ScheduleSegment {
  /** Target voltage, V, within ±{@link MAX_CONTROL_VOLTS} (dsp/calibration/plan.ts). */
  readonly volts: Volts;
  /** Time held at `volts` after the glide and overshoot, s, 0…3600. */
  readonly holdSeconds: Seconds;
  /** Time to glide to the target (or to the overshoot peak), s, 0…60. Default 0 (a jump). */
  readonly glideSeconds?: Seconds;
  /** Glide curve: 'linear', or 'exponential' (an RC-like approach, time constant glideSeconds/4, scaled to arrive exactly). Default 'linear'. */
  readonly glideShape?: GlideShape;
  /** How far past the target the voltage goes, in the direction of travel (upwards for a repeated voltage), V, −5…5. Default 0. */
  readonly overshootVolts?: Volts;
  /** Time to come back from the overshoot to the target (raised-cosine), s, 0…60. Default 0.25 (used only with an overshoot). */
  readonly overshootSeconds?: Seconds;
}

/** What a perfect meter would report for one hold of a rendered schedule. */
export interface StepTruth {
  /** Index of the segment in the schedule. */
  readonly stepIndex: number;
  /** Held control voltage, V. */
  readonly volts: Volts;
  /** Start of the hold (after the glide and overshoot), seconds from the first sample. */
  readonly startSeconds: Seconds;
  /** End of the hold, seconds from the first sample. */
  readonly endSeconds: Seconds;
  /**
   * True physical frequency at the end of the hold with the thermal tail decayed: scale error, reset time,
   * bulk resistance and the warm-up drift at `endSeconds` included; noise and jitter excluded. Hz.
   */
  readonly settledHz: Hertz;
  /** `settledHz` as it appears in the recording's time base: `settledHz/(1 + clockPpm·1e-6)`. Hz. */
  readonly recordedHz: Hertz;
  /** Perfect 1 V/oct frequency for this voltage, `hz0·2^V`, Hz. */
  readonly idealHz: Hertz;
  /** `1200·log2(settledHz/idealHz)`, cents (Ellis, 1885). */
  readonly errorCents: Cents;
  /** Warm-up drift included in `settledHz`, cents. */
  readonly driftCents: Cents;
}

/** A rendered recording of a schedule. */
export interface RenderedOscillator {
  /** Mono samples, −1…1. */
  readonly samples: Float32Array;
  /** Sample rate, Hz. */
  readonly sampleRateHz: Hertz;
  /** One entry per schedule segment. */
  readonly truth: readonly StepTruth[];
}

interface TimedSegment {
  readonly from: number;
  readonly peak: number;
  readonly to: number;
  readonly t0: number;
  readonly tGlide: number;
  readonly tOver: number;
  readonly tEnd: number;
  readonly exponential: boolean;
}

/** Longest schedule {@link renderOscillator} accepts, seconds. */
export const MAX_SCHEDULE_SECONDS = 3600;

function timeline(schedule: readonly ScheduleSegment[]): TimedSegment[] {
  if (!Array.isArray(schedule) || schedule.length === 0) {
    throw new RangeError(
      `schedule must be a non-empty array of segments, got ${Array.isArray(schedule) ? 'an empty array' : String(schedule)}`,
    );
  }
  const out: TimedSegment[] = [];
  let t = 0;
  let prev = NaN;
  schedule.forEach((seg, i) => {
    const p = `schedule[${i}]`;
    const volts = requireFiniteRange(`${p}.volts`, seg?.volts, -MAX_CONTROL_VOLTS, MAX_CONTROL_VOLTS, 'V');
    const hold = requireFiniteRange(`${p}.holdSeconds`, seg.holdSeconds, 0, MAX_SCHEDULE_SECONDS, 's');
    const glide = requireFiniteRange(`${p}.glideSeconds`, seg.glideSeconds ?? 0, 0, 60, 's');
    const over = requireFiniteRange(`${p}.overshootVolts`, seg.overshootVolts ?? 0, -5, 5, 'V');
    const overT =
      over === 0 ? 0 : requireFiniteRange(`${p}.overshootSeconds`, seg.overshootSeconds ?? 0.25, 0, 60, 's');
    const shape = seg.glideShape ?? 'linear';
    if (shape !== 'linear' && shape !== 'exponential') {
      throw new RangeError(`${p}.glideShape must be 'linear' or 'exponential', got ${String(shape)}`);
    }
    const from = Number.isNaN(prev) ? volts : prev;
    const dir = volts < from ? -1 : 1;
    const peak = volts + dir * over;
    const tGlide = t + glide;
    const tOver = tGlide + overT;
    const tEnd = tOver + hold;
    out.push({
      from,
      peak: overT > 0 ? peak : volts,
      to: volts,
      t0: t,
      tGlide,
      tOver,
      tEnd,
      exponential: shape === 'exponential',
    });
    t = tEnd;
    prev = volts;
  });
  if (!(t > 0) || t > MAX_SCHEDULE_SECONDS) {
    throw new RangeError(
      `schedule must last more than 0 and at most ${MAX_SCHEDULE_SECONDS} s in all, got ${t} s`,
    );
  }
  return out;
}

const EXP_GLIDE_RATE = 4;
const EXP_GLIDE_NORM = 1 - Math.exp(-EXP_GLIDE_RATE);

function segmentVolts(s: TimedSegment, t: number): number {
  if (t < s.tGlide) {
    const u = (t - s.t0) / (s.tGlide - s.t0);
    const e = s.exponential ? (1 - Math.exp(-EXP_GLIDE_RATE * u)) / EXP_GLIDE_NORM : u;
    return s.from + (s.peak - s.from) * e;
  }
  if (t < s.tOver) {
    const u = (t - s.tGlide) / (s.tOver - s.tGlide);
    return s.peak + (s.to - s.peak) * 0.5 * (1 - Math.cos(Math.PI * u));
  }
  return s.to;
}

/**
 * Total length of a schedule, seconds (sum of glides, overshoots and holds).
 *
 * @throws RangeError for an invalid schedule (the message names the segment and field).
 * @example scheduleSeconds(planSchedule([0, 1, 2])) // 9.3
 */
export function scheduleSeconds(schedule: readonly ScheduleSegment[]): Seconds {
  const tl = timeline(schedule);
  return tl[tl.length - 1].tEnd;
}

/**
 * Control voltage of a schedule at a time (after the end, the last voltage).
 *
 * @param schedule - Segments (see {@link ScheduleSegment}).
 * @param seconds - Time from the start, s.
 * @example controlVoltsAt([{ volts: 0, holdSeconds: 1 }, { volts: 2, holdSeconds: 1, glideSeconds: 1 }], 1.5) // 1
 */
export function controlVoltsAt(schedule: readonly ScheduleSegment[], seconds: Seconds): Volts {
  const tl = timeline(schedule);
  for (const s of tl) if (seconds < s.tEnd) return segmentVolts(s, Math.max(seconds, s.t0));
  return tl[tl.length - 1].to;
}

/**
 * Builds a schedule from a list of reference voltages: every step glides, may overshoot, then holds. The
 * first step starts at its own voltage (no glide).
 *
 * @param voltsList - Reference voltages, V, each within ±12 (`MAX_CONTROL_VOLTS`), at least one.
 * @param opts.holdSeconds - Hold per step, s. Default 3.
 * @param opts.glideSeconds - Glide into each step after the first, s. Default 0.15.
 * @param opts.glideShape - Default 'linear'.
 * @param opts.overshootVolts - Overshoot past each new voltage, V. Default 0.
 * @param opts.overshootSeconds - Return time from the overshoot, s. Default 0.25.
 * @example planSchedule([0, 1]) // [{ volts: 0, holdSeconds: 3, glideSeconds: 0 }, { volts: 1, holdSeconds: 3, glideSeconds: 0.15 }]
 */
export function planSchedule(
  voltsList: readonly Volts[],
  opts: {
    readonly holdSeconds?: Seconds;
    readonly glideSeconds?: Seconds;
    readonly glideShape?: GlideShape;
    readonly overshootVolts?: Volts;
    readonly overshootSeconds?: Seconds;
  } = {},
): ScheduleSegment[] {
  if (!Array.isArray(voltsList) || voltsList.length === 0) {
    throw new RangeError(
      `voltsList must be a non-empty array of volts, got ${Array.isArray(voltsList) ? 'an empty array' : String(voltsList)}`,
    );
  }
  const holdSeconds = opts.holdSeconds ?? 3;
  const glideSeconds = opts.glideSeconds ?? 0.15;
  const schedule = voltsList.map((volts, i): ScheduleSegment => {
    const seg: ScheduleSegment = { volts, holdSeconds, glideSeconds: i === 0 ? 0 : glideSeconds };
    if (opts.glideShape !== undefined) Object.assign(seg, { glideShape: opts.glideShape });
    if (i > 0 && opts.overshootVolts !== undefined && opts.overshootVolts !== 0) {
      Object.assign(seg, {
        overshootVolts: opts.overshootVolts,
        overshootSeconds: opts.overshootSeconds ?? 0.25,
      });
    }
    return seg;
  });
  timeline(schedule); // validate
  return schedule;
}

const CHUNK = 4096;

/**
 * Renders a whole schedule as a mono recording, in chunks, and reports the truth per step.
 *
 * @param options - Oscillator and interface options (see {@link OscillatorOptions}).
 * @param schedule - Control-voltage steps (see {@link ScheduleSegment}, {@link planSchedule}); at most
 *   {@link MAX_SCHEDULE_SECONDS} in all.
 * @returns Samples, sample rate and one {@link StepTruth} per segment. Sample n is at time n/fs.
 * @throws RangeError naming the bad option or schedule field.
 * @example
 * const r = renderOscillator({ hz0: 55 }, planSchedule([0, 3], { holdSeconds: 1 }));
 * r.truth[1].settledHz // 440
 */
export function renderOscillator(
  options: OscillatorOptions,
  schedule: readonly ScheduleSegment[],
): RenderedOscillator {
  const stream = new OscillatorStreamImpl(options);
  const o = stream.options;
  const tl = timeline(schedule);
  const fs = o.sampleRateHz;
  const total = Math.max(1, Math.round(tl[tl.length - 1].tEnd * fs));
  const samples = new Float32Array(total);
  const cv = new Float64Array(CHUNK);
  let seg = 0;
  for (let start = 0; start < total; start += CHUNK) {
    const n = Math.min(CHUNK, total - start);
    for (let i = 0; i < n; i++) {
      const t = (start + i) / fs;
      while (seg < tl.length - 1 && t >= tl[seg].tEnd) seg++;
      cv[i] = segmentVolts(tl[seg], t);
    }
    stream.render(samples.subarray(start, start + n), n === CHUNK ? cv : cv.subarray(0, n));
  }
  const apparent = 1 / (1 + o.clockPpm * 1e-6);
  const truth = tl.map((s, i): StepTruth => {
    const driftCents = o.warmupCents * Math.exp(-(o.warmupElapsedSeconds + s.tEnd) / o.warmupTauSeconds);
    const settledHz = modelHz(
      o.hz0,
      o.scaleOctPerVolt,
      o.bulkAlphaSeconds,
      o.resetSeconds,
      s.to,
      driftCents,
      null,
    );
    const ideal = o.hz0 * Math.pow(2, s.to);
    return {
      stepIndex: i,
      volts: s.to,
      startSeconds: s.tOver,
      endSeconds: s.tEnd,
      settledHz,
      recordedHz: settledHz * apparent,
      idealHz: ideal,
      errorCents: 1200 * Math.log2(settledHz / ideal),
      driftCents,
    };
  });
  return { samples, sampleRateHz: fs, truth };
}

// ---------------------------------------------------------------------------------------------------------
// Demo units
// ---------------------------------------------------------------------------------------------------------

/** A preset simulated unit for the demo. */
export interface DemoUnit {
  /** Identifier for pickers and the command line, e.g. 'ol3-0412'. */
  readonly id: string;
  /** Serial number as printed on the unit. */
  readonly serial: string;
  /** Short label. */
  readonly label: string;
  /** What is wrong with it, in a sentence. */
  readonly description: string;
  /** The oscillator's parameters (no interface noise or hum: those belong to the recording setup). */
  readonly options: OscillatorOptions;
}

/**
 * Demo batch: four OL-3 oscillators built by the Ostlund Lane workshop (an invented two-person shop), back on
 * the bench for calibration, tuned near C1 (32.703 Hz) at 0 V, and one of its OL-2 LFO cores (2 Hz at 0 V), for
 * the sub-audio range. Errors are plausible for analog units
 * (docs/facts.md, "What good tracking looks like").
 */
export const demoUnits: readonly DemoUnit[] = Object.freeze([
  {
    id: 'ol3-0412',
    serial: 'OL3-0412',
    label: 'Bench reference',
    description: 'Nearly perfect: tracks within about a cent from 0 to 7 V, small reset time, settles fast.',
    options: {
      hz0: 32.71,
      scaleOctPerVolt: 1.00002,
      resetSeconds: 0.05e-6,
      tailCentsPerVolt: -0.05,
      tailTauSeconds: 0.6,
      jitterCents: 0.003,
      shape: 'saw',
    },
  },
  {
    id: 'ol3-0417',
    serial: 'OL3-0417',
    label: 'Wide scale',
    description: 'Scale trimmer off: about +4.2 cents per octave, so 7 V lands some 29 cents sharp.',
    options: {
      hz0: 32.66,
      scaleOctPerVolt: 1 + 4.2 / 1200,
      resetSeconds: 0.2e-6,
      tailCentsPerVolt: -0.1,
      tailTauSeconds: 0.8,
      jitterCents: 0.005,
      shape: 'saw',
    },
  },
  {
    id: 'ol3-0423',
    serial: 'OL3-0423',
    label: 'HF droop',
    description:
      'Slow reset (1.2 µs) and 0.3 Ω bulk resistance: about 9 cents flat at 2 kHz and 17 at 4 kHz, within a cent and a half below 300 Hz.',
    options: {
      hz0: 32.74,
      scaleOctPerVolt: 0.99995,
      resetSeconds: 1.2e-6,
      bulkAlphaSeconds: bulkResistanceAlpha(0.3, 100e-6, 1000), // 0.3 Ω; the core draws 100 µA at 1 kHz
      tailCentsPerVolt: -0.15,
      tailTauSeconds: 1,
      jitterCents: 0.005,
      shape: 'saw',
    },
  },
  {
    id: 'ol3-0431',
    serial: 'OL3-0431',
    label: 'Still warming',
    description:
      'Switched on a minute ago: starts 14 cents flat and creeps up (time constant 7 minutes); slightly narrow scale.',
    options: {
      hz0: 32.69,
      scaleOctPerVolt: 0.9992,
      resetSeconds: 0.3e-6,
      warmupCents: -14,
      warmupTauSeconds: 420,
      warmupElapsedSeconds: 60,
      tailCentsPerVolt: -0.25,
      tailTauSeconds: 1.5,
      jitterCents: 0.01,
      shape: 'saw',
    },
  },
  {
    id: 'ol2-0208',
    serial: 'OL2-0208',
    label: 'LFO core',
    description:
      'A slow triangle core that tracks 1 V/oct from 2 Hz at 0 V (32 Hz at 4 V), about 1.5 cents per octave wide. Steps below 20 Hz take several seconds each: ten cycles to read, ten to capture.',
    options: {
      hz0: 2,
      scaleOctPerVolt: 1 + 1.5 / 1200,
      resetSeconds: 0,
      tailCentsPerVolt: -0.05,
      tailTauSeconds: 0.5,
      jitterCents: 0.003,
      shape: 'triangle',
    },
  },
]);

/**
 * Finds a demo unit by its id.
 *
 * @returns The unit, or undefined.
 * @example findDemoUnit('ol3-0417')?.serial // 'OL3-0417'
 */
export function findDemoUnit(id: string): DemoUnit | undefined {
  return demoUnits.find((u) => u.id === id);
}

/** A stretch of samples an interface lost (an overrun, a dropped block). */
export interface Dropout {
  /** Where the samples go missing, seconds from the first sample of the input. */
  readonly atSeconds: Seconds;
  /** How much is lost, seconds (≥ 0). */
  readonly seconds: Seconds;
}

/**
 * The recording an interface that dropped samples would have made: each dropout's samples are cut out
 * and the rest closes up, so the waveform jumps in phase at the join (there is no marker in the file).
 *
 * @param samples - The unbroken signal.
 * @param sampleRateHz - Its sample rate, Hz.
 * @param dropouts - Where and how long, in the unbroken signal's time; overlapping ones merge.
 * @returns The shortened signal and the break positions in it, samples.
 * @throws RangeError for a dropout outside the signal or of negative length.
 * @example withDropouts(x, 48000, [{ atSeconds: 1, seconds: 0.01 }]).breaks // [48000]
 */
export function withDropouts(
  samples: Float32Array | Float64Array,
  sampleRateHz: Hertz,
  dropouts: readonly Dropout[],
): { samples: Float64Array; breaks: number[] } {
  const cuts = dropouts
    .map((d, i) => {
      const a = Math.round(d.atSeconds * sampleRateHz);
      const b = a + Math.round(d.seconds * sampleRateHz);
      if (!(d.seconds >= 0) || a < 0 || b > samples.length) {
        throw new RangeError(
          `dropouts[${i}] must lie inside the ${samples.length / sampleRateHz} s signal, got ${d.atSeconds} s for ${d.seconds} s`,
        );
      }
      return [a, b] as const;
    })
    .sort((p, q) => p[0] - q[0]);
  const out = new Float64Array(samples.length);
  const breaks: number[] = [];
  let w = 0;
  let r = 0;
  for (const [a, b] of cuts) {
    if (b <= r) continue;
    for (; r < a; r++) out[w++] = samples[r];
    if (b > Math.max(a, r) && w > 0 && breaks[breaks.length - 1] !== w) breaks.push(w);
    r = Math.max(r, b);
  }
  for (; r < samples.length; r++) out[w++] = samples[r];
  return { samples: out.slice(0, w), breaks };
}
