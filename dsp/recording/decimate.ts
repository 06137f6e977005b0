/**
 * Decimation for the live pass over a recording: a linear-phase low-pass FIR (Kaiser-windowed sinc) that
 * keeps every D-th output, so the tracker that only finds the steps works on half (at 48 kHz) of the
 * samples. A linear-phase filter delays every frequency by the same time and changes no frequency, so
 * readings of the decimated signal are readings of the same pitch, later by a known delay. The precise
 * measurement of each step still reads the recording at its own rate.
 *
 * Pure: no Node or DOM APIs.
 */
import type { Hertz } from '../math/index.ts';

/**
 * The lowest sample rate decimation may go down to, Hz: its passband (0.4·fs) still reaches 8.8 kHz. Not lower:
 * at about 12 kHz the tracker's break search took a tone beating with nearby mains hum for dropouts, and its
 * readings went a cent off (a 100 Hz sine with −35 dB of 60 Hz hum); at 24 kHz they match the full rate.
 */
export const MIN_DECIMATED_RATE_HZ: Hertz = 22050;
/** Largest decimation factor used. */
const MAX_FACTOR = 16;
/** Stop-band attenuation of the anti-alias filter, dB. */
const STOP_DB = 60;
/** Passband edge, as a fraction of the decimated rate: harmonics up to here are kept unchanged. */
export const PASS_FRACTION = 0.4;
/** Stop-band edge, as a fraction of the decimated rate: anything above folds down to at least 0.45·fs′. */
const STOP_FRACTION = 0.55;

/**
 * The decimation factor for a recording at `sampleRateHz`: the largest power of two, at most 16, that
 * leaves at least {@link MIN_DECIMATED_RATE_HZ}. 1 (no decimation) below 44.1 kHz.
 *
 * @example decimationFactorFor(48000) // 2
 * @example decimationFactorFor(96000) // 4
 * @example decimationFactorFor(16000) // 1
 */
export function decimationFactorFor(sampleRateHz: Hertz): number {
  if (!(sampleRateHz > 0) || !Number.isFinite(sampleRateHz)) {
    throw new RangeError(`sampleRateHz must be a positive number, got ${sampleRateHz}`);
  }
  let d = 1;
  while (d * 2 <= MAX_FACTOR && sampleRateHz / (d * 2) >= MIN_DECIMATED_RATE_HZ) d *= 2;
  return d;
}

/** Zeroth-order modified Bessel function of the first kind, by its power series (converges for all x). */
function besselI0(x: number): number {
  let sum = 1;
  let term = 1;
  const q = (x * x) / 4;
  for (let k = 1; k < 200; k++) {
    term *= q / (k * k);
    sum += term;
    if (term < sum * 1e-17) break;
  }
  return sum;
}

/**
 * Taps of the anti-alias low-pass filter for decimation by `factor`: a Kaiser-windowed sinc, odd length,
 * symmetric (linear phase), unity gain at DC. Passband to 0.4, stop band from 0.55 of the decimated
 * rate, at least 60 dB down.
 *
 * Kaiser's design formulas (Oppenheim & Schafer, *Discrete-Time Signal Processing*, 3rd ed., §7.6.1,
 * eqs. 7.62–7.63): β = 0.1102·(A − 8.7) for A > 50 dB, and length N − 1 = (A − 8)/(2.285·Δω) with Δω the
 * transition width in radians per sample.
 *
 * @param factor - Decimation factor, an integer from 2 to 16.
 * @throws RangeError for a factor outside 2…16.
 * @example decimationTaps(4).length // 99
 */
export function decimationTaps(factor: number): Float64Array {
  if (!Number.isInteger(factor) || factor < 2 || factor > MAX_FACTOR) {
    throw new RangeError(`factor must be an integer from 2 to ${MAX_FACTOR}, got ${factor}`);
  }
  const beta = 0.1102 * (STOP_DB - 8.7);
  const dw = (2 * Math.PI * (STOP_FRACTION - PASS_FRACTION)) / factor;
  let n = Math.ceil((STOP_DB - 8) / (2.285 * dw)) + 1;
  if (n % 2 === 0) n++;
  const fc = (PASS_FRACTION + STOP_FRACTION) / 2 / factor; // cycles per input sample
  const mid = (n - 1) / 2;
  const i0b = besselI0(beta);
  const h = new Float64Array(n);
  let sum = 0;
  for (let i = 0; i < n; i++) {
    const m = i - mid;
    const sinc = m === 0 ? 2 * fc : Math.sin(2 * Math.PI * fc * m) / (Math.PI * m);
    const r = m / mid;
    h[i] = sinc * (besselI0(beta * Math.sqrt(Math.max(0, 1 - r * r))) / i0b);
    sum += h[i];
  }
  for (let i = 0; i < n; i++) h[i] /= sum;
  return h;
}

/**
 * Streaming decimator: low-pass filters and keeps every `factor`-th sample, block by block, carrying the
 * filter's history across blocks (the result is the same however the input is cut into blocks). Output `m`
 * is the filter's output at input sample `m·factor`; its content is that of input time
 * `m·factor − delayFrames`. Before the first input sample the input is taken to hold its first value.
 *
 * @example
 * const d = new Decimator(4);
 * const out = new Float32Array(d.outputLength(48000));
 * const n = d.push(block48k, out); // about 12000 samples at 12 kHz
 */
export class Decimator {
  /** Decimation factor. */
  readonly factor: number;
  /** Group delay of the filter, input frames (half its length less one). */
  readonly delayFrames: number;
  private readonly taps: Float64Array;
  private hist: Float64Array;
  /** Input frames seen so far. */
  private seen = 0;

  /** @throws RangeError for a factor outside 2…16 (see {@link decimationTaps}). */
  constructor(factor: number) {
    this.factor = factor;
    this.taps = decimationTaps(factor);
    this.delayFrames = (this.taps.length - 1) / 2;
    this.hist = new Float64Array(this.taps.length - 1);
  }

  /** Most outputs a push of `inputLength` frames can give. */
  outputLength(inputLength: number): number {
    return Math.ceil(inputLength / this.factor) + 1;
  }

  /**
   * Filters `x` and writes the kept outputs to `out` (which must hold {@link outputLength} of them).
   *
   * @returns How many outputs were written.
   */
  push(x: Float32Array, out: Float32Array): number {
    const h = this.taps;
    const n = h.length;
    const keep = n - 1;
    // Work buffer: the last n − 1 inputs, then this block.
    if (this.hist.length < keep + x.length) {
      const grown = new Float64Array(keep + x.length);
      grown.set(this.hist.subarray(0, keep));
      this.hist = grown;
    }
    const buf = this.hist;
    // Before the first sample the input is taken to have held that sample's value, so a DC offset does
    // not start with a step (which would read as a burst of sound in an otherwise silent file).
    if (this.seen === 0 && x.length > 0) buf.fill(x[0], 0, keep);
    buf.set(x, keep);
    const d = this.factor;
    // First input index in this block (global) that is a multiple of the factor.
    const first = (d - (this.seen % d)) % d;
    let w = 0;
    const mid = keep / 2;
    for (let i = first; i < x.length; i += d) {
      // y = Σ h[k]·x[i − k], and x[i − k] sits at buf[keep + i − k]; with h symmetric (h[k] = h[n−1−k]) the
      // sum runs over buf[i…i + n − 1] and pairs of taps share one multiplication.
      let acc = h[mid] * buf[i + mid];
      for (let k = 0, e = i + keep; k < mid; k++, e--) acc += h[k] * (buf[i + k] + buf[e]);
      out[w++] = acc;
    }
    buf.copyWithin(0, x.length, x.length + keep);
    this.seen += x.length;
    return w;
  }
}
