// Writers of long test recordings, a block at a time, so an hour of audio never sits in memory: 32-bit
// float WAV (RIFF/WAVE, IBM & Microsoft 1991; format tag 3 = IEEE float) of a tone whose frequency follows
// a given function of time, its phase integrated sample by sample in double precision.
import { closeSync, openSync, writeSync } from 'node:fs';

/** A band-limited sawtooth's first six harmonics, amplitude 1/k (its Fourier series). */
export const SAW6: readonly number[] = [1, 1 / 2, 1 / 3, 1 / 4, 1 / 5, 1 / 6];

/** A tone: frequency at time t (s), Hz; and the amplitude of each harmonic (1 = a sine). */
export interface LongTone {
  readonly hzAt: (t: number) => number;
  readonly harmonics?: readonly number[];
  readonly amplitude?: number;
}

/** Write a header of a 32-bit float WAV file: `RIFF` for data under 4 GiB. */
export function floatWavHeader(frames: number, rate: number, channels: number): Buffer {
  const dataBytes = frames * channels * 4;
  const h = Buffer.alloc(44);
  h.write('RIFF', 0, 'latin1');
  h.writeUInt32LE(36 + dataBytes, 4);
  h.write('WAVEfmt ', 8, 'latin1');
  h.writeUInt32LE(16, 16);
  h.writeUInt16LE(3, 20); // WAVE_FORMAT_IEEE_FLOAT
  h.writeUInt16LE(channels, 22);
  h.writeUInt32LE(rate, 24);
  h.writeUInt32LE(rate * channels * 4, 28);
  h.writeUInt16LE(channels * 4, 32);
  h.writeUInt16LE(32, 34);
  h.write('data', 36, 'latin1');
  h.writeUInt32LE(dataBytes, 40);
  return h;
}

/**
 * Writes `seconds` of a tone as a stereo (or n-channel) 32-bit float WAV, every channel the same.
 *
 * @returns The number of frames written.
 */
export function writeLongToneWav(
  path: string,
  seconds: number,
  rate: number,
  channels: number,
  tone: LongTone,
): number {
  const frames = Math.round(seconds * rate);
  const harmonics = tone.harmonics ?? [1];
  const amp = tone.amplitude ?? 0.5;
  const fd = openSync(path, 'w');
  try {
    writeSync(fd, floatWavHeader(frames, rate, channels));
    const blockFrames = 1 << 16;
    const buf = new Float32Array(blockFrames * channels);
    const bytes = new Uint8Array(buf.buffer);
    let phase = 0; // cycles
    for (let start = 0; start < frames; start += blockFrames) {
      const n = Math.min(blockFrames, frames - start);
      // The frequency changes slowly: evaluated every 480 samples and held, the phase stays continuous.
      let hz = tone.hzAt(start / rate);
      for (let i = 0; i < n; i++) {
        if (i % 480 === 0) hz = tone.hzAt((start + i) / rate);
        // sin(kθ) by the Chebyshev recurrence sin(kθ) = 2·cos θ·sin((k−1)θ) − sin((k−2)θ).
        const th = 2 * Math.PI * phase;
        const s1 = Math.sin(th);
        const c2 = 2 * Math.cos(th);
        let x = harmonics[0] * s1;
        let prev = 0;
        let cur = s1;
        for (let k = 1; k < harmonics.length; k++) {
          const next = c2 * cur - prev;
          prev = cur;
          cur = next;
          x += harmonics[k] * cur;
        }
        phase += hz / rate;
        if (phase > 1e6) phase -= Math.floor(phase);
        const v = amp * x;
        for (let c = 0; c < channels; c++) buf[i * channels + c] = v;
      }
      writeSync(fd, bytes, 0, n * channels * 4);
    }
  } finally {
    closeSync(fd);
  }
  return frames;
}
