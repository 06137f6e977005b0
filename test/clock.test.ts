import { describe, it, expect } from 'vitest';
import {
  MAX_CLOCK_PPM,
  applyClockPpm,
  centsToPpm,
  clockPpmFromReference,
  ppmToCents,
} from '../dsp/io/index.ts';

describe('clock error in cents', () => {
  it('1 ppm is 0.001 731 cent and 100 ppm 0.173 cent', () => {
    // docs/facts.md, "The sound card" (derived from Ellis's 1200·log2).
    expect(ppmToCents(1)).toBeCloseTo(0.001731, 6);
    expect(ppmToCents(100)).toBeCloseTo(0.173, 3);
  });

  it('one cent is a ratio of 1.000 577 790', () => {
    // docs/facts.md / Ellis 1885: one cent is a ratio of 1.000 577 790.
    expect(centsToPpm(1)).toBeCloseTo(577.79, 2);
  });

  it('a 100 ppm/K capacitor tempco is about 1/6 cent per kelvin', () => {
    // docs/facts.md (derived): 100 ppm/K is about 1/6 cent per kelvin.
    expect(ppmToCents(100)).toBeCloseTo(1 / 6, 1);
  });

  it.each([-1000, -20, 0, 1, 100, 1000])('round-trips %d ppm', (ppm) => {
    expect(centsToPpm(ppmToCents(ppm))).toBeCloseTo(ppm, 9);
  });
});

describe('applyClockPpm and clockPpmFromReference', () => {
  it('corrects a reading to the reference', () => {
    const r = clockPpmFromReference(999.9, 1000);
    expect(r.kind).toBe('ok');
    if (r.kind !== 'ok') return;
    expect(r.ppm).toBeCloseTo(100.01, 2);
    expect(r.cents).toBeCloseTo(0.1731, 4);
    expect(applyClockPpm(999.9, r.ppm)).toBeCloseTo(1000, 9);
  });

  describe.each([-100, -20, 0, 35, 100])('clock %d ppm', (ppm) => {
    it('leaves intervals unchanged', () => {
      // docs/facts.md: a clock error scales every frequency alike, so intervals are immune.
      const lo = 130.8128;
      const hi = 1046.502;
      const before = 1200 * Math.log2(hi / lo);
      const after = 1200 * Math.log2(applyClockPpm(hi, ppm) / applyClockPpm(lo, ppm));
      expect(after).toBeCloseTo(before, 9);
    });

    it('round-trips through a reference tone', () => {
      const trueHz = 440;
      const measured = trueHz / (1 + ppm * 1e-6);
      const r = clockPpmFromReference(measured, trueHz);
      expect(r.kind === 'ok' && r.ppm).toBeCloseTo(ppm, 8);
    });
  });

  it('calls a wrong sample-rate setting implausible instead of correcting it', () => {
    // 48 kHz audio analysed as 44.1 kHz reads every frequency low by 44.1/48.
    const r = clockPpmFromReference(440 * (44100 / 48000), 440);
    expect(r).toMatchObject({ kind: 'none', reason: 'beyond-plausible-range' });
    expect(r.ppm).toBeCloseTo((48000 / 44100 - 1) * 1e6, 6);
    expect(MAX_CLOCK_PPM).toBe(1000);
  });

  it('rejects invalid input', () => {
    expect(() => applyClockPpm(0, 1)).toThrow('hz must be a finite number greater than 0, got 0');
    expect(() => applyClockPpm(440, 5000)).toThrow(
      'ppm must be a finite number from −1000 to 1000, got 5000',
    );
    expect(() => clockPpmFromReference(440, Number.NaN)).toThrow(
      'trueHz must be a finite number greater than 0, got NaN',
    );
    expect(() => ppmToCents(-1e6)).toThrow('ppm must be a finite number greater than −1000000, got -1000000');
    expect(() => centsToPpm(Infinity)).toThrow('cents must be a finite number, got Infinity');
  });
});
