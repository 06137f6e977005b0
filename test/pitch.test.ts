import { describe, expect, it } from 'vitest';
import { YIN } from 'pitchfinder';
import { estimatePitch, PitchEstimator } from '../dsp/pitch/index.ts';
import { pickInterleavedChannel } from '../dsp/pitch/index.ts';
import { selectMedian, smallSampleFactor } from '../dsp/pitch/index.ts';
import { addDcStep, addHum, addNoise, centsError, tone, toFloat32, type Shape } from './signals.ts';

function measure(x: Float64Array, fs: number) {
  const r = estimatePitch(toFloat32(x), fs);
  if (r.kind !== 'ok') throw new Error(`no reading: ${r.reason} (coarse ${r.coarseHz ?? '–'} Hz)`);
  return r;
}

describe('clean band-limited tones, 1 s (target: within 0.01 cent, no octave errors)', () => {
  // A subset of the bench grid keeps the suite quick; `npm run bench` sweeps the whole grid.
  const cases: [Shape, number, number][] = [];
  for (const shape of ['saw', 'square', 'pulse10', 'triangle', 'sine'] as Shape[]) {
    for (const fs of [44100, 96000]) {
      // Octaves of C (12-TET, A4 = 440 Hz, ISO 16:1975: C0 = 16.3516 Hz … C9 = 8372.018 Hz) and values whose
      // periods are not whole numbers of samples, which would flatter an interpolating estimator.
      for (const f of [16.3516, 27.3, 261.6256, 987.7, 4186.009, 8372.018]) cases.push([shape, fs, f]);
    }
  }
  it.each(cases)('%s at %d Hz sampling, %d Hz', (shape, fs, f) => {
    const r = measure(tone(shape, f, fs, 1), fs);
    const e = centsError(r.hz, f);
    expect(Math.abs(e), `error ${e} cents`).toBeLessThan(0.01);
    expect(r.uncertaintyCents).toBeGreaterThan(0);
    expect(r.uncertaintyCents).toBeLessThan(0.01);
  });
});

describe('noise, hum and DC', () => {
  it.each([16.3516, 65.4064, 261.6256, 2093.005, 5111])('saw at %d Hz, 40 dB SNR: within 0.01 cent', (f) => {
    const fs = 48000;
    const x = tone('saw', f, fs, 1);
    addNoise(x, 40, 1234);
    const e = centsError(measure(x, fs).hz, f);
    expect(Math.abs(e), `error ${e} cents`).toBeLessThan(0.01);
  });

  it.each([32.7032, 130.8128, 987.7, 8372.018])(
    'sine at %d Hz, 20 dB SNR: within 0.1 cent above 30 Hz',
    (f) => {
      const fs = 48000;
      const x = tone('sine', f, fs, 1);
      addNoise(x, 20, 99);
      const e = centsError(measure(x, fs).hz, f);
      expect(Math.abs(e), `error ${e} cents`).toBeLessThan(0.1);
    },
  );

  it.each([
    ['saw', 16.3516, 50],
    ['saw', 65.4064, 60],
    ['square', 32.7032, 50],
    ['saw', 130.8128, 60],
    ['sine', 261.6256, 50],
  ] as [Shape, number, number][])(
    '%s at %d Hz with %d Hz hum at −30 dB and a DC step, 40 dB SNR',
    (shape, f, humHz) => {
      const fs = 48000;
      const x = tone(shape, f, fs, 1);
      addHum(x, humHz, fs, -30);
      addDcStep(x, fs, 0, 0.05, 0.43);
      addNoise(x, 40, 5);
      const e = centsError(measure(x, fs).hz, f);
      expect(Math.abs(e), `error ${e} cents`).toBeLessThan(0.01);
    },
  );

  it('the stated uncertainty covers the error: within 2 standard errors in at least 90 % of noisy trials', () => {
    // Coverage of ±2σ for a normal error is 95.4 % (any statistics handbook); 90 % leaves room for sampling.
    const fs = 48000;
    let inside = 0;
    const trials = 40;
    for (let t = 0; t < trials; t++) {
      const f = 100 + 37.3 * t;
      const x = tone(t % 2 ? 'saw' : 'sine', f, fs, 0.25);
      addNoise(x, 25, 1000 + t);
      const r = measure(x, fs);
      if (Math.abs(centsError(r.hz, f)) <= 2 * r.uncertaintyCents) inside++;
    }
    expect(inside / trials).toBeGreaterThanOrEqual(0.9);
  });
});

describe('agreement with an independent estimator', () => {
  // pitchfinder's YIN (de Cheveigné & Kawahara, JASA 111(4), 2002) is accurate to a few cents on clean
  // mid-range tones; ours must agree with it within that.
  it.each([110, 220.5, 440, 880])('YIN and Spanmeter agree on a %d Hz saw within 5 cents', (f) => {
    const fs = 44100;
    const x = toFloat32(tone('saw', f, fs, 0.2));
    const yin = YIN({ sampleRate: fs })(x.subarray(0, 4096));
    expect(yin).not.toBeNull();
    const ours = estimatePitch(x, fs);
    expect(ours.kind).toBe('ok');
    if (ours.kind === 'ok' && yin) expect(Math.abs(centsError(ours.hz, yin))).toBeLessThan(5);
  });
});

describe('no answer is a typed result, never an exception', () => {
  const fs = 48000;
  it('digital silence', () => {
    const r = estimatePitch(new Float32Array(4800), fs);
    expect(r).toMatchObject({ kind: 'none', reason: 'silent' });
  });
  it('DC only', () => {
    const r = estimatePitch(new Float32Array(4800).fill(0.3), fs);
    expect(r).toMatchObject({ kind: 'none', reason: 'silent' });
  });
  it('NaN and infinities', () => {
    const x = toFloat32(tone('saw', 440, fs, 0.2));
    x[100] = NaN;
    x[200] = Infinity;
    expect(estimatePitch(x, fs)).toMatchObject({ kind: 'none', reason: 'bad-samples' });
  });
  it('a hard-clipped tone', () => {
    const x = toFloat32(
      tone('sine', 440, fs, 0.2, { amplitude: 3 }).map((v) => Math.max(-1, Math.min(1, v))),
    );
    expect(estimatePitch(x, fs)).toMatchObject({ kind: 'none', reason: 'clipped' });
  });
  it('white noise has no pitch', () => {
    const x = new Float64Array(9600);
    addNoise(x.fill(1e-3), 0, 3);
    for (let i = 0; i < x.length; i++) x[i] -= 1e-3;
    const r = estimatePitch(toFloat32(x), fs);
    expect(r.kind).toBe('none');
  });
  it('too few cycles for the window', () => {
    const r = estimatePitch(toFloat32(tone('sine', 20, fs, 0.1)), fs);
    expect(r).toMatchObject({ kind: 'none' });
  });
  it('above the measurable range', () => {
    const r = estimatePitch(toFloat32(tone('sine', 9000, fs, 0.2)), fs, { maxHz: 5000 });
    expect(r).toMatchObject({ kind: 'none', reason: 'above-range' });
  });
  it('level is reported in dBFS', () => {
    // A sine of peak 0.5 has an RMS of 0.5/√2: −9.03 dBFS (definition of RMS and dBFS, AES17).
    const r = estimatePitch(toFloat32(tone('sine', 440, fs, 0.2)), fs);
    expect(r.level.rmsDbfs).toBeCloseTo(-9.03, 1);
    expect(r.level.peakDbfs).toBeCloseTo(-6.02, 1);
  });
});

describe('misuse throws a precise message', () => {
  it('sample rate out of range', () => {
    expect(() => estimatePitch(new Float32Array(100), 4000)).toThrow(
      'sampleRateHz must be between 8000 and 384000 Hz, got 4000',
    );
  });
  it('bad range', () => {
    expect(() => estimatePitch(new Float32Array(100), 48000, { minHz: 500, maxHz: 100 })).toThrow(
      /minHz and maxHz must satisfy/,
    );
  });
  it('window longer than the estimator', () => {
    const est = new PitchEstimator(1024, 48000);
    expect(() => est.estimate(new Float32Array(2048), 0, 2048)).toThrow(
      'count must be an integer from 0 to 1024, got 2048',
    );
  });
});

describe('multichannel input', () => {
  it('reads the named channel of an interleaved buffer', () => {
    const fs = 48000;
    const a = tone('saw', 220, fs, 0.5);
    const b = tone('square', 330, fs, 0.5);
    const inter = new Float32Array(a.length * 2);
    for (let i = 0; i < a.length; i++) {
      inter[2 * i] = a[i];
      inter[2 * i + 1] = b[i];
    }
    const est = new PitchEstimator(a.length, fs);
    const r = est.estimate(inter, 1, a.length, 0, 2);
    expect(r.kind).toBe('ok');
    if (r.kind === 'ok') expect(Math.abs(centsError(r.hz, 330))).toBeLessThan(0.01);
    const left = pickInterleavedChannel(inter, 2, 0);
    const rl = estimatePitch(left, fs);
    expect(rl.kind === 'ok' && Math.abs(centsError(rl.hz, 220)) < 0.01).toBe(true);
    expect(() => pickInterleavedChannel(inter, 2, 2)).toThrow(
      'channel must be an integer from 0 to 1, got 2',
    );
  });
});

describe('helpers', () => {
  it("Student's t factor: t(0.975, 4)/1.96 (Abramowitz & Stegun table 26.10: 2.776)", () => {
    expect(smallSampleFactor(4) * 1.959964).toBeCloseTo(2.776, 3);
    expect(smallSampleFactor(1000)).toBeCloseTo(1, 2);
  });
  it('median by quickselect', () => {
    const a = Float64Array.of(5, 1, 4, 2, 3);
    expect(selectMedian(a, 5)).toBe(3);
  });
});
