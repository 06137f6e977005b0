/**
 * Test-signal generators: band-limited periodic waveforms, seeded noise, hum and DC.
 *
 * Waveforms are built additively from their Fourier series (handbook series, e.g. Oppenheim & Schafer,
 * "Discrete-Time Signal Processing"), keeping only harmonics below `maxHarmonicHz` (default 0.45·fs),
 * so they are exactly band-limited: no aliases to flatter or fool an estimator.
 */

import { rng } from './helpers/random.ts';

/** The seeded generator (test/helpers/random.ts), re-exported for the signal generators' users. */
export { rng };

export type Shape = 'sine' | 'saw' | 'square' | 'pulse10' | 'triangle';

/** Fourier amplitude (sine series, relative) of harmonic k of a unit waveform. */
export function harmonicAmplitude(shape: Shape, k: number): number {
  switch (shape) {
    case 'sine':
      return k === 1 ? 1 : 0;
    case 'saw':
      return 1 / k; // sawtooth: Σ sin(kθ)/k
    case 'square':
      return k % 2 === 1 ? 1 / k : 0; // square: Σ odd sin(kθ)/k
    case 'triangle':
      return k % 2 === 1 ? (((k - 1) / 2) % 2 === 0 ? 1 : -1) / (k * k) : 0; // triangle: Σ odd ±sin(kθ)/k²
    case 'pulse10':
      return Math.sin(Math.PI * k * 0.1) / k; // 10 % pulse: cosine series sin(πkd)/k (phase shifted below)
  }
}

/** Generate a band-limited periodic waveform of peak amplitude ≈ `amplitude`. */
export function tone(
  shape: Shape,
  hz: number,
  sampleRate: number,
  seconds: number,
  opts: { amplitude?: number; phase?: number; maxHarmonicHz?: number } = {},
): Float64Array {
  const n = Math.round(seconds * sampleRate);
  const out = new Float64Array(n);
  const maxH = opts.maxHarmonicHz ?? 0.45 * sampleRate;
  const kMax = Math.max(1, Math.floor(maxH / hz));
  const phase0 = opts.phase ?? 0.3;
  const amps: number[] = [];
  for (let k = 1; k <= kMax; k++) amps.push(harmonicAmplitude(shape, k));
  const usesCos = shape === 'pulse10';
  const w = (2 * Math.PI * hz) / sampleRate;
  for (let i = 0; i < n; i++) {
    const th = w * i + phase0;
    // Chebyshev recurrence for sin(kθ)/cos(kθ): exact to rounding, cheap for many harmonics.
    const c1 = Math.cos(th);
    let sPrev = 0;
    let s = usesCos ? 1 : 0;
    let sCur = usesCos ? c1 : Math.sin(th);
    let acc = 0;
    for (let k = 1; k <= kMax; k++) {
      acc += amps[k - 1] * sCur;
      sPrev = s;
      s = sCur;
      sCur = 2 * c1 * s - sPrev;
    }
    out[i] = acc;
  }
  // Normalise to the requested peak.
  let peak = 0;
  for (let i = 0; i < n; i++) peak = Math.max(peak, Math.abs(out[i]));
  const g = (opts.amplitude ?? 0.5) / (peak || 1);
  for (let i = 0; i < n; i++) out[i] *= g;
  return out;
}

/** Gaussian white noise with standard deviation `sigma` (Box–Muller). */
export function gaussianNoise(n: number, sigma: number, seed: number): Float64Array {
  const r = rng(seed);
  const out = new Float64Array(n);
  for (let i = 0; i < n; i += 2) {
    const u1 = Math.max(r(), 1e-300);
    const u2 = r();
    const m = sigma * Math.sqrt(-2 * Math.log(u1));
    out[i] = m * Math.cos(2 * Math.PI * u2);
    if (i + 1 < n) out[i + 1] = m * Math.sin(2 * Math.PI * u2);
  }
  return out;
}

/** Mean square of a signal. */
export function power(x: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < x.length; i++) s += x[i] * x[i];
  return s / x.length;
}

/** Add white Gaussian noise at `snrDb` relative to the signal's own power (in place; returns the noise σ). */
export function addNoise(x: Float64Array, snrDb: number, seed: number): number {
  const sigma = Math.sqrt(power(x) / Math.pow(10, snrDb / 10));
  const nz = gaussianNoise(x.length, sigma, seed);
  for (let i = 0; i < x.length; i++) x[i] += nz[i];
  return sigma;
}

/** Add mains hum at `hz` (50 or 60) with a few harmonics, `levelDb` relative to the signal's power (in place). */
export function addHum(x: Float64Array, hz: number, sampleRate: number, levelDb: number): void {
  const a = Math.sqrt((2 * power(x)) / Math.pow(10, -levelDb / 10));
  for (let i = 0; i < x.length; i++) {
    const t = i / sampleRate;
    x[i] +=
      a *
      (Math.sin(2 * Math.PI * hz * t) +
        0.3 * Math.sin(2 * Math.PI * 2 * hz * t + 1) +
        0.2 * Math.sin(2 * Math.PI * 3 * hz * t + 2));
  }
}

/** Add a DC offset that steps from `before` to `after` at `atSeconds` (in place). */
export function addDcStep(
  x: Float64Array,
  sampleRate: number,
  before: number,
  after: number,
  atSeconds: number,
): void {
  const at = Math.round(atSeconds * sampleRate);
  for (let i = 0; i < x.length; i++) x[i] += i < at ? before : after;
}

/** Float32 copy, as audio hardware delivers it. */
export function toFloat32(x: Float64Array): Float32Array {
  return Float32Array.from(x);
}

/** Error of a measured frequency against the truth, in cents. */
export function centsError(measuredHz: number, trueHz: number): number {
  return 1200 * Math.log2(measuredHz / trueHz);
}
