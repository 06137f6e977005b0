import { describe, expect, it } from 'vitest';
import { estimatePitch } from '../dsp/pitch/index.ts';
import { createOscillatorStream, trueHz, withDropouts } from '../dsp/sim/index.ts';
import { PitchTracker } from '../dsp/pitch/index.ts';
import { addNoise, centsError, tone, toFloat32 } from './signals.ts';

const FS = 48000;

/** A tone with samples cut out, as an interface overrun leaves it (no marker in the data). */
function broken(shape: 'saw' | 'sine', hz: number, gapsMs: number[], seed: number) {
  const total = 2 + gapsMs.reduce((a, b) => a + b, 0) / 1000;
  const x = tone(shape, hz, FS, total);
  addNoise(x, 40, seed);
  const at = gapsMs.map((g, i) => ({ atSeconds: 0.31 + 0.47 * i, seconds: g / 1000 }));
  return withDropouts(x, FS, at);
}

describe('breaks found in the data', () => {
  // Tolerance: the target, 0.01 cent worst error with dropouts of 0.5–20 ms. Without the
  // stretch-wise fit, 0.5–2 ms gaps moved a 3 s tone by 0.3–0.7 cent and 10 ms by 1.2 cents.
  it.each([
    ['saw', 110, [0.5]],
    ['saw', 440.7, [2]],
    ['saw', 1234.5, [10, 20]],
    ['sine', 440.7, [20]],
    ['sine', 261.6, [0.5, 2, 10]],
  ] as const)(
    '%s at %d Hz with dropouts of %j ms reads within 0.01 cent and says it spans a break',
    (shape, hz, gaps) => {
      const { samples } = broken(shape, hz, [...gaps], 3);
      const r = estimatePitch(samples.subarray(0, FS * 1.5), FS);
      expect(r.kind).toBe('ok');
      if (r.kind !== 'ok') return;
      const e = centsError(r.hz, hz);
      expect(Math.abs(e), `error ${e} cent`).toBeLessThan(0.01);
      expect(Math.abs(e), `error ${e} cent, stated ${r.uncertaintyCents}`).toBeLessThan(
        4 * r.uncertaintyCents + 1e-4,
      );
      expect(r.breaks).toBeGreaterThanOrEqual(1);
    },
  );

  it('finds no break in a clean tone or in an oscillator with flicker and white frequency noise', () => {
    const clean = tone('saw', 330, FS, 1);
    addNoise(clean, 40, 9);
    expect(estimatePitch(clean, FS)).not.toHaveProperty('breaks');
    for (let seed = 1; seed <= 4; seed++) {
      const o = { hz0: 200 + 50 * seed, whiteFmCents: 0.03, flickerFmCents: 0.03, snrDb: 40, seed };
      const buf = new Float32Array(FS);
      createOscillatorStream(o).render(buf, 0);
      expect(estimatePitch(buf, FS), `seed ${seed}`).not.toHaveProperty('breaks');
    }
  });
});

describe('breaks reported by the capture', () => {
  it('a settled average over a marked dropout fits each side with its own phase', () => {
    const hz = 523.25;
    const { samples, breaks } = broken('saw', hz, [10], 5);
    const t = new PitchTracker({ sampleRateHz: FS });
    const x = toFloat32(samples);
    let pos = 0;
    for (const b of [...breaks, x.length]) {
      for (let i = pos; i < b; i += 1000) t.push(x.subarray(i, Math.min(b, i + 1000)));
      t.markBreak();
      pos = b;
    }
    const r = t.averageOfSpan(0.1, 1.9);
    expect(r.kind).toBe('ok');
    if (r.kind !== 'ok') return;
    expect(Math.abs(centsError(r.hz, hz))).toBeLessThan(0.01);
    expect(r.breaks).toBe(1);
    expect(r.components?.estimatorCents).toBeGreaterThan(0);
  });
});

describe('repeatability in settled averages', () => {
  it('an oscillator with flicker and white FM states an uncertainty that covers its wander', () => {
    // Target of the issue: at least 90 % of steps within 2 stated σ; 12 captures here, at most one outside.
    let outside = 0;
    for (let seed = 1; seed <= 12; seed++) {
      const o = { hz0: 150 + 40 * seed, whiteFmCents: 0.01, flickerFmCents: 0.01, snrDb: 40, seed };
      const buf = new Float32Array(3 * FS);
      createOscillatorStream(o).render(buf, 0);
      const t = new PitchTracker({ sampleRateHz: FS });
      for (let i = 0; i < buf.length; i += 4096) t.push(buf.subarray(i, i + 4096));
      const r = t.averageOfSpan(1.5, 2.5);
      expect(r.kind).toBe('ok');
      if (r.kind !== 'ok' || !r.components) throw new Error('no components');
      expect(r.components.repeatabilityCents).toBeGreaterThan(r.components.estimatorCents);
      expect(r.uncertaintyCents).toBeCloseTo(
        Math.hypot(r.components.estimatorCents, r.components.repeatabilityCents),
        12,
      );
      if (Math.abs(centsError(r.hz, trueHz(0, o))) > 2 * r.uncertaintyCents) outside++;
    }
    expect(outside).toBeLessThanOrEqual(1);
  });
});
