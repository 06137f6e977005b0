/**
 * How far the live pass over a recording decimates: the factor for a recording's sample rate. The filter and
 * the decimator themselves are dsp/pitch/decimate.ts (a Kaiser-windowed sinc, linear phase), so the tracker that
 * only finds the steps works on half (at 48 kHz) of the samples, later by a known delay and with no pitch
 * changed. The precise measurement of each step still reads the recording at its own rate.
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
/** Largest decimation factor used (the Kaiser design's limit, dsp/pitch/decimate.ts). */
const MAX_FACTOR = 16;

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
