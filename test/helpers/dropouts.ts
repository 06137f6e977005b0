/**
 * Tones broken by dropouts, as an interface overrun leaves them (samples cut out, no marker in the data), for
 * the tests of break handling, and the target such a window's reading must meet.
 */
import { expect } from 'vitest';
import { estimatePitch, type PitchOk } from '../../dsp/pitch/index.ts';
import { withDropouts } from '../../dsp/sim/index.ts';
import { addNoise, centsError, tone, type Shape } from '../signals.ts';

/** Sample rate of the broken tones, Hz. */
export const DROPOUT_FS = 48000;

/**
 * One second of a tone at 40 dB SNR with `gapMs` cut out at each of `atSeconds`. The truth is the generator's
 * frequency (a Fourier series, see signals.ts); `breaks` are where the cuts fall, in samples of what remains.
 */
export function brokenSecond(
  shape: Shape,
  hz: number,
  phase: number,
  gapMs: number,
  atSeconds: number[],
  seed: number,
): { samples: Float64Array; breaks: number[] } {
  const x = tone(shape, hz, DROPOUT_FS, 1.2 + (atSeconds.length * gapMs) / 1000, { phase });
  addNoise(x, 40, seed);
  const { samples, breaks } = withDropouts(
    x,
    DROPOUT_FS,
    atSeconds.map((a) => ({ atSeconds: a, seconds: gapMs / 1000 })),
  );
  return { samples: samples.subarray(0, DROPOUT_FS), breaks: breaks.filter((b) => b < DROPOUT_FS) };
}

/**
 * Reads a broken window and checks the dropout target: a reading within 0.01 cent of the generator's
 * frequency (the worst-case target for 0.5–20 ms dropouts) and inside two stated standard
 * uncertainties. Returns the reading for further checks.
 */
export function expectOnDropoutTarget(samples: Float32Array | Float64Array, hz: number): PitchOk {
  const r = estimatePitch(samples, DROPOUT_FS);
  expect(r.kind).toBe('ok');
  if (r.kind !== 'ok') throw new Error(`no reading: ${r.reason}`);
  const e = centsError(r.hz, hz);
  expect(Math.abs(e), `error ${e} cent`).toBeLessThan(0.01);
  expect(Math.abs(e), `error ${e} cent, stated ${r.uncertaintyCents}`).toBeLessThanOrEqual(
    2 * r.uncertaintyCents,
  );
  return r;
}
