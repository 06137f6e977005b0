/**
 * Decimation by an integer factor D, one engine for both of its uses: a linear-phase low-pass FIR that keeps every
 * D-th output, evaluated directly (no integrator that could accumulate rounding), carrying its history across
 * blocks. A linear-phase filter delays every frequency by the same time and changes no frequency, so pitches
 * read from its output are the input's pitches, later by a known delay. Two tap designs feed it:
 *
 * - {@link decimationTaps}: a Kaiser-windowed sinc with a flat passband, for reading a recording's audio-range
 *   steps at about 24 kHz (dsp/recording);
 * - {@link cicTaps}: three cascaded moving averages (a CIC filter), whose nulls sit on every multiple of the
 *   output rate, for the tracker's sub-audio side at 8 to 16 kHz (dsp/pitch/stream.ts), where D reaches 48.
 *
 * Pure: no Node or DOM APIs.
 */

/** Largest factor {@link decimationTaps} designs for. */
const MAX_KAISER_FACTOR = 16;
/** Stop-band attenuation of the Kaiser design, dB. */
const STOP_DB = 60;
/** Passband edge of the Kaiser design, as a fraction of the decimated rate: harmonics up to here are kept unchanged. */
export const PASS_FRACTION = 0.4;
/** Stop-band edge of the Kaiser design, as a fraction of the decimated rate: anything above folds down to at least 0.45·fs′. */
const STOP_FRACTION = 0.55;

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
  if (!Number.isInteger(factor) || factor < 2 || factor > MAX_KAISER_FACTOR) {
    throw new RangeError(`factor must be an integer from 2 to ${MAX_KAISER_FACTOR}, got ${factor}`);
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
 * Taps of a third-order CIC decimation filter by `factor` (E. B. Hogenauer, "An economical class of digital
 * filters for decimation and interpolation", IEEE Trans. ASSP 29(2), 1981): a box of D taps convolved with
 * itself twice, 3D − 2 taps, symmetric, unity gain at DC. Its nulls sit on every multiple of the output rate,
 * where the aliases of the band a sub-audio tone's harmonics occupy come from.
 *
 * @param factor - Decimation factor, an integer from 1 (the identity) to 1024.
 * @throws RangeError for a factor outside 1…1024.
 * @example cicTaps(2) // Float64Array [0.125, 0.375, 0.375, 0.125]
 */
export function cicTaps(factor: number): Float64Array {
  if (!Number.isInteger(factor) || factor < 1 || factor > 1024) {
    throw new RangeError(`factor must be an integer from 1 to 1024, got ${factor}`);
  }
  const box = new Float64Array(factor).fill(1);
  let k: Float64Array = box;
  for (let pass = 0; pass < 2; pass++) {
    const next = new Float64Array(k.length + factor - 1);
    for (let i = 0; i < k.length; i++) for (let j = 0; j < factor; j++) next[i + j] += k[i];
    k = next;
  }
  const norm = factor * factor * factor;
  for (let i = 0; i < k.length; i++) k[i] /= norm;
  return k;
}

/**
 * Streaming decimator: low-pass filters with the given linear-phase taps and keeps every `factor`-th sample,
 * block by block, carrying the filter's history across blocks (the result is the same however the input is
 * cut into blocks). Output `m` is the filter's output at input sample `m·factor`; its content is that of input
 * time `m·factor − delayFrames`. Before the first input sample the input is taken to hold its first value, so
 * a DC offset does not start with a step (which would read as a burst of sound in an otherwise silent file).
 *
 * @example
 * const d = new Decimator(4);
 * const out = new Float32Array(d.outputLength(48000));
 * const n = d.push(block48k, out); // about 12000 samples at 12 kHz
 */
export class Decimator {
  /** Decimation factor. */
  readonly factor: number;
  /** Group delay of the filter, input frames: half its length less one (a half-integer for an even length). */
  readonly delayFrames: number;
  /** Outputs whose filter reached before the first input sample (they hold the held first value). */
  readonly startupOutputs: number;
  private readonly taps: Float64Array;
  private hist: Float64Array;
  /** Input frames seen so far. */
  private seen = 0;

  /**
   * @param factor - Decimation factor, an integer ≥ 1.
   * @param taps - Filter taps, symmetric (linear phase). Default: {@link decimationTaps}(factor).
   * @throws RangeError for a factor that is not a positive integer, taps that are not symmetric, or (with the
   * default taps) a factor outside 2…16.
   */
  constructor(factor: number, taps?: Float64Array) {
    if (!Number.isInteger(factor) || factor < 1) {
      throw new RangeError(`factor must be a positive integer, got ${factor}`);
    }
    const h = taps ?? decimationTaps(factor);
    const n = h.length;
    for (let k = 0; k < n >> 1; k++) {
      if (!(Math.abs(h[k] - h[n - 1 - k]) <= 1e-12 * Math.max(Math.abs(h[k]), 1e-300))) {
        throw new RangeError(
          `taps must be symmetric (linear phase): tap ${k} is ${h[k]}, tap ${n - 1 - k} is ${h[n - 1 - k]}`,
        );
      }
    }
    this.factor = factor;
    this.taps = h;
    this.delayFrames = (n - 1) / 2;
    this.startupOutputs = Math.ceil((n - 1) / factor);
    this.hist = new Float64Array(Math.max(0, n - 1));
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
    if (this.seen === 0 && x.length > 0) buf.fill(x[0], 0, keep);
    buf.set(x, keep);
    const d = this.factor;
    // First input index in this block (global) that is a multiple of the factor.
    const first = (d - (this.seen % d)) % d;
    let w = 0;
    const half = n >> 1;
    const odd = (n & 1) === 1;
    for (let i = first; i < x.length; i += d) {
      // y = Σ h[k]·x[i − k], and x[i − k] sits at buf[keep + i − k]; with h symmetric (h[k] = h[n−1−k]) the
      // sum runs over buf[i…i + n − 1] and pairs of taps share one multiplication.
      let acc = odd ? h[half] * buf[i + half] : 0;
      for (let k = 0, e = i + keep; k < half; k++, e--) acc += h[k] * (buf[i + k] + buf[e]);
      out[w++] = acc;
    }
    buf.copyWithin(0, x.length, x.length + keep);
    this.seen += x.length;
    return w;
  }

  /** Forgets the history: the next push starts a new stream. */
  reset(): void {
    this.hist.fill(0);
    this.seen = 0;
  }
}
