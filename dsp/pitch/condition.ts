import type { SignalLevel } from './reading.ts';

/** Sample value at or above which a sample counts as clipped (just under full scale, so 16-bit ±32767 counts). */
export const CLIP_THRESHOLD = 0.999;

/** Converts a linear amplitude to dBFS; 0 gives −Infinity. */
export function amplitudeToDbfs(amplitude: number): number {
  return amplitude > 0 ? 20 * Math.log10(amplitude) : -Infinity;
}

/** What {@link conditionInto} found in the raw samples. */
export interface ConditionStats {
  /** Number of NaN or infinite samples replaced by zero. */
  badSamples: number;
  /** Peak absolute value of the finite raw samples. */
  peak: number;
  /** Fraction of samples at or above {@link CLIP_THRESHOLD}. */
  clippedFraction: number;
  /** RMS after removing the mean and linear trend. */
  rms: number;
}

/**
 * Copies `count` samples of `src` from `start` into `dst` (a preallocated work buffer) and conditions them:
 * non-finite samples become 0, and the least-squares straight line through the window is subtracted
 * (removes a DC offset and the slow drift an AC-coupled input shows after a DC step). Allocation-free.
 *
 * Straight-line least squares: the normal equations of y = a + b·(n − n̄), whose regressors are orthogonal
 * (e.g. Press et al., Numerical Recipes, §15.2).
 *
 * @param src - Raw samples, any finite or non-finite values.
 * @param start - First index in `src` to copy.
 * @param count - Number of samples; `dst.length` must be at least this.
 * @param dst - Output work buffer.
 * @param stats - Filled with what was found.
 * @param stride - Step between consecutive samples of `src` (channel count of an interleaved buffer). Default 1.
 */
export function conditionInto(
  src: ArrayLike<number>,
  start: number,
  count: number,
  dst: Float64Array,
  stats: ConditionStats,
  stride = 1,
): void {
  let bad = 0;
  let peak = 0;
  let clipped = 0;
  let sum = 0;
  let sumN = 0;
  const nBar = (count - 1) / 2;
  for (let i = 0; i < count; i++) {
    let v = src[start + i * stride];
    if (!Number.isFinite(v)) {
      v = 0;
      bad++;
    }
    const a = v < 0 ? -v : v;
    if (a > peak) peak = a;
    if (a >= CLIP_THRESHOLD) clipped++;
    dst[i] = v;
    sum += v;
    sumN += v * (i - nBar);
  }
  const mean = count > 0 ? sum / count : 0;
  // Σ (n − n̄)² for n = 0…count−1 is count·(count² − 1)/12.
  const sxx = (count * (count * count - 1)) / 12;
  const slope = sxx > 0 ? sumN / sxx : 0;
  let ss = 0;
  for (let i = 0; i < count; i++) {
    const v = dst[i] - mean - slope * (i - nBar);
    dst[i] = v;
    ss += v * v;
  }
  stats.badSamples = bad;
  stats.peak = peak;
  stats.clippedFraction = count > 0 ? clipped / count : 0;
  stats.rms = count > 0 ? Math.sqrt(ss / count) : 0;
}

/** The {@link SignalLevel} of a conditioned window. */
export function levelOf(stats: ConditionStats): SignalLevel {
  return {
    rmsDbfs: amplitudeToDbfs(stats.rms),
    peakDbfs: amplitudeToDbfs(stats.peak),
    clippedFraction: stats.clippedFraction,
  };
}

/**
 * Extracts one channel of an interleaved multichannel buffer.
 *
 * @param interleaved - Frames of `channelCount` samples each.
 * @param channelCount - Channels per frame, integer ≥ 1.
 * @param channel - Zero-based channel index, 0 ≤ channel < channelCount.
 * @throws RangeError when the counts do not fit.
 * @example pickInterleavedChannel(Float32Array.of(1, 2, 3, 4), 2, 1) // Float32Array [2, 4]
 */
export function pickInterleavedChannel(
  interleaved: ArrayLike<number>,
  channelCount: number,
  channel: number,
): Float32Array {
  if (!Number.isInteger(channelCount) || channelCount < 1) {
    throw new RangeError(`channelCount must be an integer ≥ 1, got ${channelCount}`);
  }
  if (!Number.isInteger(channel) || channel < 0 || channel >= channelCount) {
    throw new RangeError(`channel must be an integer from 0 to ${channelCount - 1}, got ${channel}`);
  }
  const frames = Math.floor(interleaved.length / channelCount);
  const out = new Float32Array(frames);
  for (let i = 0; i < frames; i++) out[i] = interleaved[i * channelCount + channel];
  return out;
}
