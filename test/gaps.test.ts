import { describe, expect, it } from 'vitest';
import { estimatePitch } from '../dsp/pitch/index.ts';
import { createOscillatorStream, trueHz } from '../dsp/sim/index.ts';
import { addNoise, centsError, tone, type Shape } from './signals.ts';
import { DROPOUT_FS, brokenSecond } from './helpers/dropouts.ts';

const FS = DROPOUT_FS;

/** `brokenSecond` (test/helpers/dropouts.ts) with the phase these cases were written with. */
function brokenAt(shape: Shape, hz: number, gapMs: number, atSeconds: number[], seed: number) {
  return brokenSecond(shape, hz, 0.7 * seed, gapMs, atSeconds, seed);
}

describe('two and three dropouts in one window, found in the data', () => {
  // Truth: generated signal, truth by construction (the tone's frequency before the samples were cut).
  // Tolerance: the target, 0.01 cent worst error for 0.5–20 ms dropouts, one to three per window.
  const cases: [Shape, number, number[]][] = [
    ['saw', 110.3, [0.31, 0.72]],
    ['sine', 440.7, [0.27, 0.58]],
    ['square', 196.1, [0.22, 0.49, 0.81]],
    ['triangle', 733.2, [0.18, 0.52, 0.77]],
    ['saw', 1234.5, [0.4, 0.47, 0.9]],
  ];
  for (const gapMs of [0.5, 2, 10, 20]) {
    it.each(cases)(
      `%s at %d Hz, dropouts of ${gapMs} ms at %j s: within 0.01 cent, within 3 stated σ, flagged`,
      (shape, hz, at) => {
        const { samples } = brokenAt(shape, hz, gapMs, at, 11 + at.length);
        const r = estimatePitch(samples, FS);
        expect(r.kind).toBe('ok');
        if (r.kind !== 'ok') return;
        const e = centsError(r.hz, hz);
        expect(Math.abs(e), `error ${e} cent`).toBeLessThan(0.01);
        expect(Math.abs(e), `error ${e} cent, stated ${r.uncertaintyCents}`).toBeLessThan(
          3 * r.uncertaintyCents + 1e-5,
        );
        // The typed flag: the reading spans a break.
        expect(r.breaks ?? 0).toBeGreaterThanOrEqual(1);
      },
    );
  }

  it('a sine 6 Hz above a mains line is not taken for hum when dropouts spread its skirt', () => {
    // Generated signal, truth by construction. Before: the skirt made 120 Hz look like hum, the
    // fundamental was left out and the reading was 5.7 cents off.
    const { samples } = brokenAt('sine', 126.3, 2, [0.41, 0.72], 5);
    const r = estimatePitch(samples, FS);
    expect(r.kind).toBe('ok');
    if (r.kind !== 'ok') return;
    expect(Math.abs(centsError(r.hz, 126.3))).toBeLessThan(0.01);
  });
});

describe('no false breaks', () => {
  // The test of a break must not fire on tones that have none (generated signals; the count is zero by
  // construction). Clean, 40 dB noise, harmonic-rich (saw, 10 % pulse) and a wandering oscillator.
  it.each([
    ['saw', 55, 'clean', 0],
    ['saw', 261.6, '40 dB SNR', 40],
    ['pulse10', 98, '40 dB SNR', 40],
    ['sine', 16.35, '20 dB SNR', 20],
    ['triangle', 1760, '40 dB SNR', 40],
    ['square', 440, 'clean', 0],
  ] as const)('%s at %d Hz, %s, reads without a break', (shape, hz, label, snr) => {
    for (let seed = 1; seed <= 3; seed++) {
      const x = tone(shape, hz, FS, 1, { phase: seed });
      if (snr > 0) addNoise(x, snr, 100 + seed);
      const r = estimatePitch(x, FS);
      expect(r.kind).toBe('ok');
      expect(r, `${label}, seed ${seed}`).not.toHaveProperty('breaks');
    }
  });

  it('an oscillator with flicker and white frequency noise up to 0.05 cent reads without a break', () => {
    let falseBreaks = 0;
    for (let seed = 1; seed <= 8; seed++) {
      const level = [0.003, 0.01, 0.05][seed % 3];
      const o = {
        hz0: 80 + 97 * seed,
        whiteFmCents: level / Math.SQRT2,
        flickerFmCents: level / Math.SQRT2,
        snrDb: 40,
        seed,
        shape: (['saw', 'square', 'triangle', 'sine'] as const)[seed % 4],
      };
      const buf = new Float32Array(2 * FS);
      createOscillatorStream(o).render(buf, 0);
      const r = estimatePitch(buf.subarray(FS), FS);
      expect(r.kind).toBe('ok');
      if (r.kind === 'ok' && r.breaks) falseBreaks++;
      if (r.kind === 'ok') expect(Math.abs(centsError(r.hz, trueHz(0, o)))).toBeLessThan(1);
    }
    expect(falseBreaks).toBe(0);
  });
});
