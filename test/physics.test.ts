import { describe, it, expect } from 'vitest';
import {
  BOLTZMANN_J_PER_K,
  ELEMENTARY_CHARGE_C,
  ZERO_CELSIUS_KELVIN,
  attenuationForOneVoltPerOctave,
  bulkResistanceErrorCents,
  celsiusToKelvin,
  centsToMillivolts,
  compareHighFrequencyModels,
  millivoltsToCents,
  resetTimeErrorCents,
  scaleTempcoPpmPerKelvin,
  thermalVoltageVolts,
  uncompensatedDriftCentsPerKelvinPerOctave,
  voltsPerOctaveAtBase,
} from '../dsp/converter/index.ts';
import { gaussianNoise } from './signals.ts';

describe('SI constants', () => {
  it('are the exact 2019 values', () => {
    // BIPM, SI Brochure, 9th edition (2019), Table 1: exact defining constants.
    expect(BOLTZMANN_J_PER_K).toBe(1.380649e-23);
    expect(ELEMENTARY_CHARGE_C).toBe(1.602176634e-19);
    // BIPM SI Brochure: t/°C = T/K − 273.15.
    expect(ZERO_CELSIUS_KELVIN).toBe(273.15);
    expect(celsiusToKelvin(25)).toBe(298.15);
  });

  it('give k/q = 86.173 33 µV/K', () => {
    // docs/facts.md (derived from the BIPM exact constants): k/q = 86.173 33 µV/K.
    expect(thermalVoltageVolts(0) / 273.15).toBeCloseTo(86.17333e-6, 10);
    // VT at 25 °C = 25.6926 mV (derived from the exact constants).
    expect(thermalVoltageVolts(25) * 1000).toBeCloseTo(25.6926, 4);
  });
});

describe('volts per octave at the base, VT·ln 2', () => {
  // docs/facts.md, "The exponential converter" (derived): 17.510 mV at 20 °C, 17.809 at 25, 17.928 at 27, 19.302 at 50.
  describe.each([
    [20, 17.51],
    [25, 17.809],
    [27, 17.928],
    [50, 19.302],
  ])('at %d °C', (tempC, mv) => {
    it(`is ${mv} mV`, () => {
      expect(voltsPerOctaveAtBase(tempC) * 1000).toBeCloseTo(mv, 3);
    });
  });

  it('is "about 18 mV per octave" near room temperature', () => {
    // docs/facts.md: "About 18 mV per octave" is the rule of thumb (common practice).
    expect(Math.abs(voltsPerOctaveAtBase(25) * 1000 - 18)).toBeLessThan(0.5);
  });

  it('needs an attenuation of 1 V / (VT ln2) ≈ 56.15 for 1 V/oct at 25 °C', () => {
    // Derived from the line above: 1/0.017 809 = 56.15.
    expect(attenuationForOneVoltPerOctave(25)).toBeCloseTo(56.152, 3);
    expect(attenuationForOneVoltPerOctave(25) * voltsPerOctaveAtBase(25)).toBeCloseTo(1, 14);
  });
});

describe('temperature behaviour', () => {
  it('scale tempco is 1/T: 3354 ppm/K at 25 °C', () => {
    // docs/facts.md (derived): 3354 ppm/K at 25 °C.
    expect(Math.round(scaleTempcoPpmPerKelvin(25))).toBe(3354);
    // docs/facts.md (common practice): a tempco resistor near +3300 to +3500 ppm/K compensates it.
    expect(scaleTempcoPpmPerKelvin(25)).toBeGreaterThan(3300);
    expect(scaleTempcoPpmPerKelvin(25)).toBeLessThan(3500);
  });

  it('matches the numerical derivative of VT·ln2', () => {
    // Derived: d ln(VT)/dT = 1/T; checked by central difference.
    const h = 1e-3;
    const d = (Math.log(voltsPerOctaveAtBase(25 + h)) - Math.log(voltsPerOctaveAtBase(25 - h))) / (2 * h);
    expect(d * 1e6).toBeCloseTo(scaleTempcoPpmPerKelvin(25), 3);
  });

  it('an uncompensated converter drifts about 4.0 cents/K per octave from the pivot', () => {
    // docs/facts.md (derived): about 4.0 cents per kelvin for every octave from the pivot.
    expect(uncompensatedDriftCentsPerKelvinPerOctave(25)).toBeCloseTo(4.025, 3);
    // Numerical check: a fixed base voltage worth n octaves at 25 °C is n·VT(25)/VT(26) octaves at 26 °C.
    const n = 3;
    const shiftCents = (1200 * n * (voltsPerOctaveAtBase(25) / voltsPerOctaveAtBase(25.0001) - 1)) / 0.0001;
    expect(-shiftCents / n).toBeCloseTo(uncompensatedDriftCentsPerKelvinPerOctave(25), 4);
  });

  it('a −2 mV/K Vbe shift is about 135 cents/K at the base', () => {
    // Sedra & Smith, Microelectronic Circuits: Vbe moves about −2 mV/K; docs/facts.md derives ≈ 135 cents/K.
    expect(millivoltsToCents(2, voltsPerOctaveAtBase(25))).toBeCloseTo(134.8, 1);
  });
});

describe('high-frequency errors (docs/facts.md, derived)', () => {
  describe.each([
    // [hz, reset s, cents]: −1200·log2(1 + f·t)
    [1000, 1e-6, -1.73],
    [4000, 1e-6, -6.9],
    [8000, 1e-6, -13.8],
    [1000, 4.55e-6, -7.859],
  ])('reset time at %d Hz, %d s', (hz, t, cents) => {
    it(`is ${cents} cents`, () => {
      const digits = String(cents).split('.')[1]?.length ?? 0;
      expect(resetTimeErrorCents(hz, t)).toBeCloseTo(cents, digits);
    });
  });

  it('reset time 1 µs at 1 kHz is −1.730 cents to three decimals', () => {
    // docs/facts.md (derived): "For 1 µs: −1.730 cents at 1 kHz".
    expect(resetTimeErrorCents(1000, 1e-6).toFixed(3)).toBe('-1.730');
    expect(resetTimeErrorCents(1000, 0)).toBe(-0);
  });

  it('bulk resistance: 1 Ω at 100 µA is −6.7 cents, at 1 mA −67 cents (25 °C)', () => {
    // docs/facts.md (derived): −1200·Ic·R/(VT·ln2).
    expect(bulkResistanceErrorCents(100e-6, 1, 25)).toBeCloseTo(-6.74, 2);
    expect(Math.round(bulkResistanceErrorCents(1e-3, 1, 25))).toBe(-67);
    // It doubles with every octave because the current does.
    expect(bulkResistanceErrorCents(200e-6, 1) / bulkResistanceErrorCents(100e-6, 1)).toBeCloseTo(2, 12);
  });

  it('both grow in proportion to frequency to first order', () => {
    // docs/facts.md: "to first order both grow in proportion to frequency".
    const r = resetTimeErrorCents(100, 1e-6) / resetTimeErrorCents(50, 1e-6);
    expect(r).toBeCloseTo(2, 3);
  });
});

describe('millivolts and cents', () => {
  it('1 mV is 1.2 cents and a semitone is 83.333 mV at 1 V/oct', () => {
    // docs/facts.md (derived); a semitone is 100 cents (A. J. Ellis, 1885).
    expect(millivoltsToCents(1)).toBeCloseTo(1.2, 12);
    expect(millivoltsToCents(1000 / 12)).toBeCloseTo(100, 10);
    expect(centsToMillivolts(100)).toBeCloseTo(83.333, 3);
  });

  it('meter accuracies translate as in docs/facts.md', () => {
    // docs/facts.md (derived from the usual ±(% + counts) specification): ±7 mV is ±8.4 cents, ±0.8 mV about ±1 cent.
    expect(millivoltsToCents(7)).toBeCloseTo(8.4, 10);
    expect(Math.round(millivoltsToCents(0.8))).toBe(1);
    // Reference accuracy 2.000 ± 0.002 V (0.1 %) is ±2.4 cents.
    expect(millivoltsToCents(2)).toBeCloseTo(2.4, 10);
  });

  it.each([-250, -1, 0, 0.001, 3.3, 1000])('round-trips %d mV', (mv) => {
    expect(centsToMillivolts(millivoltsToCents(mv, 0.0178), 0.0178)).toBeCloseTo(mv, 10);
  });
});

describe('invalid inputs', () => {
  it.each([
    [
      () => thermalVoltageVolts(-273.15),
      'tempC must be a finite temperature above −273.15 °C and at most 1000 °C, got -273.15',
    ],
    [
      () => voltsPerOctaveAtBase(Number.NaN),
      'tempC must be a finite temperature above −273.15 °C and at most 1000 °C, got NaN',
    ],
    [() => resetTimeErrorCents(0, 1e-6), 'hz must be a finite number greater than 0, got 0'],
    [
      () => resetTimeErrorCents(1000, -1e-6),
      'resetSeconds must be a finite number at least 0, got -0.000001',
    ],
    [() => bulkResistanceErrorCents(-1, 1), 'collectorAmps must be a finite number at least 0, got -1'],
    [() => bulkResistanceErrorCents(1e-4, Infinity), 'ohms must be a finite number at least 0, got Infinity'],
    [() => millivoltsToCents(1, 0), 'voltsPerOctave must be a finite number greater than 0, got 0'],
    [() => centsToMillivolts(Number.NaN), 'cents must be a finite number, got NaN'],
  ])('%#', (fn, message) => {
    expect(fn).toThrow(RangeError);
    expect(fn).toThrow(message);
  });
});

// Round trips of the two HF models of docs/facts.md: data generated from one model must be recognised as it.
describe('compareHighFrequencyModels', () => {
  const octaves = [0, 1, 2, 3, 4, 5, 6, 7, 8];
  const f0 = 32.7;

  /** Steps at f0·2^V with a reset time t: f = fi/(1 + fi·t). */
  function resetSteps(t: number, noiseCents: number, seed: number) {
    const noise = gaussianNoise(octaves.length, noiseCents, seed);
    const hz = octaves.map((v) => {
      const fi = f0 * 2 ** v;
      return fi / (1 + fi * t);
    });
    const cents = hz.map((f, i) => 1200 * Math.log2(f / (f0 * 2 ** octaves[i])) + noise[i]);
    return { hz, cents };
  }
  /** Steps with bulk resistance: f = fi·exp(−α f), solved by fixed-point iteration. */
  function bulkSteps(alpha: number, noiseCents: number, seed: number) {
    const noise = gaussianNoise(octaves.length, noiseCents, seed);
    const hz = octaves.map((v) => {
      const fi = f0 * 2 ** v;
      let f = fi;
      for (let k = 0; k < 100; k++) f = fi * Math.exp(-alpha * f);
      return f;
    });
    const cents = hz.map((f, i) => 1200 * Math.log2(f / (f0 * 2 ** octaves[i])) + noise[i]);
    return { hz, cents };
  }

  describe.each([
    [4.55e-6, 2],
    [2e-6, 3],
    [3e-6, 1],
  ])('reset time %d s', (t, seed) => {
    it('is recognised and recovered, through the origin and with a free line', () => {
      const { hz, cents } = resetSteps(t, 0.01, seed);
      const a = compareHighFrequencyModels({ hz, centsFromIdeal: cents, uncertaintyCents: 0.01 });
      expect(a.kind, JSON.stringify(a)).toBe('ok');
      if (a.kind !== 'ok') return;
      expect(a.better).toBe('reset-time');
      expect(Math.abs(a.resetTime.resetSeconds - t)).toBeLessThan(4 * a.resetTime.resetSecondsStdErr + 1e-12);
      // With a scale error and offset on top, measured against the nominal line.
      const volts = octaves;
      const tilted = cents.map((c, i) => c + 12.5 - 3.2 * volts[i]);
      const b = compareHighFrequencyModels({ hz, centsFromIdeal: tilted, uncertaintyCents: 0.01, volts });
      expect(b.kind).toBe('ok');
      if (b.kind !== 'ok') return;
      expect(b.better).toBe('reset-time');
      expect(b.resetTime.resetSeconds / t).toBeCloseTo(1, 1);
      expect(b.resetTime.line?.centsPerVolt).toBeCloseTo(-3.2, 1);
    });
  });

  describe.each([
    // α such that the error at 1 kHz is about −6.7, −10 and −20 cents.
    [(6.7e-3 * 0.6931) / 1200, 4],
    [(10e-3 * 0.6931) / 1200, 5],
    [(20e-3 * 0.6931) / 1200, 6],
  ])('bulk resistance α = %d s', (alpha, seed) => {
    it('is recognised and recovered', () => {
      const { hz, cents } = bulkSteps(alpha, 0.01, seed);
      const a = compareHighFrequencyModels({ hz, centsFromIdeal: cents, uncertaintyCents: 0.01 });
      expect(a.kind, JSON.stringify(a)).toBe('ok');
      if (a.kind !== 'ok') return;
      expect(a.better).toBe('bulk-resistance');
      expect(Math.abs(a.bulkResistance.alpha - alpha)).toBeLessThan(4 * a.bulkResistance.alphaStdErr);
    });
  });

  it('recovers the exact worked reset time 4.55 µs from noiseless data', () => {
    // docs/facts.md worked figure: 4.55 µs at 1 kHz is −7.859 cents.
    const hz = [1000, 2000, 4000, 8000];
    const ideal = hz.map((f) => f / (1 - f * 4.55e-6));
    const cents = hz.map((f, i) => 1200 * Math.log2(f / ideal[i]));
    expect(cents[0]).toBeCloseTo(resetTimeErrorCents(ideal[0], 4.55e-6), 10);
    const a = compareHighFrequencyModels({ hz, centsFromIdeal: cents, uncertaintyCents: 0.01 });
    expect(a.kind === 'ok' && a.resetTime.resetSeconds).toBeCloseTo(4.55e-6, 12);
  });

  it('separates a 1 µs reset time only with finer readings', () => {
    // At 1 µs the curvature that tells the models apart is only ~0.06 cent at 8 kHz (derived: (f·t)²/2 in
    // natural-log units), so 0.001-cent readings decide where 0.5-cent readings cannot.
    const fine = resetSteps(1e-6, 0.001, 9);
    expect(
      compareHighFrequencyModels({ hz: fine.hz, centsFromIdeal: fine.cents, uncertaintyCents: 0.001 }),
    ).toMatchObject({
      kind: 'ok',
      better: 'reset-time',
    });
    const coarse = resetSteps(1e-6, 0, 9);
    expect(
      compareHighFrequencyModels({ hz: coarse.hz, centsFromIdeal: coarse.cents, uncertaintyCents: 0.5 }),
    ).toMatchObject({
      kind: 'undecided',
      reason: 'models-alike',
    });
  });

  it('is undecided with too few points', () => {
    expect(
      compareHighFrequencyModels({ hz: [1000, 2000], centsFromIdeal: [-2, -4], uncertaintyCents: 0.01 }),
    ).toEqual({
      kind: 'undecided',
      reason: 'too-few-points',
    });
    expect(
      compareHighFrequencyModels({
        hz: [1, 2, 4, 8],
        centsFromIdeal: [0, 0, 0, 0],
        uncertaintyCents: 0.01,
        volts: [0, 1, 2, 3],
      }).kind,
    ).toBe('undecided');
  });

  it('says no-hf-error when the deviations are noise', () => {
    const hz = octaves.map((v) => f0 * 2 ** v);
    const noise = Array.from(gaussianNoise(hz.length, 0.01, 7));
    const a = compareHighFrequencyModels({ hz, centsFromIdeal: noise, uncertaintyCents: 0.01 });
    expect(a).toMatchObject({ kind: 'undecided', reason: 'no-hf-error' });
  });

  it('says models-alike when the readings are too coarse to see the curvature', () => {
    const { hz, cents } = resetSteps(2e-6, 0, 8);
    const a = compareHighFrequencyModels({ hz, centsFromIdeal: cents, uncertaintyCents: 2 });
    expect(a).toMatchObject({ kind: 'undecided', reason: 'models-alike' });
  });

  it('rejects mismatched or invalid arrays', () => {
    expect(() =>
      compareHighFrequencyModels({ hz: [1, 2, 3], centsFromIdeal: [0, 0], uncertaintyCents: 0.01 }),
    ).toThrow('centsFromIdeal must have the same length as hz (3), got 2');
    expect(() =>
      compareHighFrequencyModels({ hz: [1, -2, 3], centsFromIdeal: [0, 0, 0], uncertaintyCents: 0.01 }),
    ).toThrow('hz[1] must be a finite number greater than 0, got -2');
    expect(() =>
      compareHighFrequencyModels({
        hz: [1, 2, 3],
        centsFromIdeal: [0, 0, 0],
        uncertaintyCents: [0.1, -1, 0.1],
      }),
    ).toThrow('uncertaintyCents[1] must be a finite number at least 0, got -1');
  });
});
