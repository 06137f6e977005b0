/**
 * The one WAV writer of the tests: float samples in, a RIFF/WAVE file out, in memory or on disk.
 *
 * The bytes come from the npm `wavefile` library (an outside, general-purpose WAV codec), so the project's own
 * reader (dsp/io) is always tested on files it did not write itself. Samples are floats; integer depths are
 * clipped to ±1 and scaled by the format's positive full scale, 2^(bits−1) − 1 (8-bit is unsigned, offset by
 * 128), then rounded: the usual float-to-PCM mapping (Microsoft/IBM "Multimedia Programming Interface and Data
 * Specifications 1.0", 1991, for the layout; the scaling is common practice, no source).
 */
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import wavefile from 'wavefile';

/** A sample format: integer PCM of 8, 16, 24 or 32 bits, or 32-bit IEEE float. */
export type WavDepth = '8' | '16' | '24' | '32' | '32f';

/** The integer code of a float sample for `depth` (clipped to ±1); the sample itself for float. */
export function pcmCode(x: number, depth: WavDepth): number {
  if (depth === '32f') return x;
  const c = Math.max(-1, Math.min(1, x));
  if (depth === '8') return Math.round(c * 127 + 128);
  return Math.round(c * (2 ** (Number(depth) - 1) - 1));
}

/**
 * A whole WAV file in memory.
 *
 * @param channels - One array of float samples per channel (all the same length).
 * @param sampleRateHz - Frames per second.
 * @param depth - Sample format; 16-bit PCM unless given.
 * @example wavBytes([tone('sine', 440, 48000, 1)], 48000, '24') // a mono 24-bit file
 */
export function wavBytes(
  channels: readonly ArrayLike<number>[],
  sampleRateHz: number,
  depth: WavDepth = '16',
): Uint8Array {
  if (channels.length === 0) throw new RangeError('wavBytes: channels must hold at least one channel, got 0');
  const coded = channels.map((c) => Array.from(c, (x) => pcmCode(x, depth)));
  const w = new wavefile.WaveFile();
  w.fromScratch(channels.length, sampleRateHz, depth, channels.length === 1 ? coded[0] : coded);
  return w.toBuffer();
}

/** Write a WAV file at `path` (see {@link wavBytes}) and return the path. */
export function writeWavFile(
  path: string,
  channels: readonly ArrayLike<number>[],
  sampleRateHz: number,
  depth: WavDepth = '16',
): string {
  writeFileSync(path, wavBytes(channels, sampleRateHz, depth));
  return path;
}

/** A new empty folder under the system's temporary folder, named `spanmeter-<prefix>-XXXXXX`. */
export function tempDir(prefix: string): string {
  return mkdtempSync(join(tmpdir(), `spanmeter-${prefix}-`));
}
