import { describe, expect, it } from 'vitest';
import jstat from 'jstat';
import {
  derivedBudget,
  meterHalfWidth,
  meterResolutionVolts,
  METER_PRESETS,
  stepBudget,
  stepFitUncertaintyCents,
  voltageUncertainty,
  type BudgetStep,
} from '../dsp/model/index.ts';
import { fitCalibrationModel, predictionSensitivities, scaleSensitivities } from '../dsp/model/index.ts';
import { formatUncertainty } from '../dsp/format/index.ts';
import { coverageFactor, studentTCdf, studentTQuantile, welchSatterthwaite } from '../dsp/math/index.ts';
import { judgeTolerance } from '../dsp/model/index.ts';

const { jStat } = jstat;

describe('Student t', () => {
  // Coverage factors k = t_p(ν) for p = 95.45 %: JCGM 100:2008 (GUM) Table G.2 (from memory of the table).
  const tableG2: [number, number][] = [
    [1, 13.97],
    [2, 4.53],
    [3, 3.31],
    [4, 2.87],
    [5, 2.65],
    [6, 2.52],
    [7, 2.43],
    [8, 2.37],
    [9, 2.32],
    [10, 2.28],
    [20, 2.13],
    [50, 2.05],
    [100, 2.025],
  ];
  it.each(tableG2)('k for ν = %i is %f (GUM Table G.2)', (nu, k) => {
    expect(coverageFactor(nu)).toBeCloseTo(k, nu === 100 ? 3 : 2);
  });
  it('is 2 for infinite degrees of freedom (GUM G.1.3)', () => {
    expect(coverageFactor(Infinity)).toBe(2);
  });
  it('truncates fractional ν to the next lower integer (GUM G.4.1)', () => {
    expect(coverageFactor(4.9)).toBe(coverageFactor(4));
  });
  // Independent reference: jstat's Student t (npm `jstat`).
  it.each([1, 2, 3, 5, 8, 13, 30, 120])('quantiles and CDF agree with jstat for ν = %i', (nu) => {
    for (const p of [0.6, 0.9, 0.95, 0.975, 0.995]) {
      expect(studentTQuantile(p, nu)).toBeCloseTo(jStat.studentt.inv(p, nu), 6);
    }
    for (const t of [-3, -0.5, 0, 0.7, 2.2, 6]) {
      expect(studentTCdf(t, nu)).toBeCloseTo(jStat.studentt.cdf(t, nu), 7);
    }
  });
  it('names the bad argument', () => {
    expect(() => studentTQuantile(1, 3)).toThrow('p must be a number strictly between 0 and 1, got 1');
    expect(() => coverageFactor(0)).toThrow('dof must be a number greater than 0 (Infinity allowed), got 0');
  });
});

describe('Welch–Satterthwaite (GUM G.4.1, equation G.2b)', () => {
  it('is u_c⁴ / Σ u_i⁴/ν_i', () => {
    // Two equal contributions, ν = 4 and ∞: (2)² / (1/4) = 16 (derived).
    expect(
      welchSatterthwaite([
        { u: 1, dof: 4 },
        { u: 1, dof: Infinity },
      ]),
    ).toBe(16);
    // Three Type A terms: u = 0.3, 0.4, 1.2 with ν = 5, 9, 12 (derived by hand: 1.69² / (0.0081/5 + 0.0256/9 + 2.0736/12)).
    const nu = welchSatterthwaite([
      { u: 0.3, dof: 5 },
      { u: 0.4, dof: 9 },
      { u: 1.2, dof: 12 },
    ]);
    expect(nu).toBeCloseTo(1.69 ** 2 / (0.0081 / 5 + 0.0256 / 9 + 2.0736 / 12), 10);
  });
  it('is infinite when every term is Type B', () => {
    expect(welchSatterthwaite([{ u: 1, dof: Infinity }])).toBe(Infinity);
  });
});

describe('meter specification', () => {
  it('reproduces the worked example: ±(0.05 % + 3 counts) on 1.0000 V at 0.1 mV is ±0.8 mV, u = 0.46 mV = 0.55 cent', () => {
    // docs/facts.md worked example (derived); rectangular u = a/√3, JCGM 100:2008 4.3.7.
    const m = METER_PRESETS['4.5-digit'];
    expect(meterResolutionVolts(m, 1)).toBe(0.0001);
    expect(meterHalfWidth(m, 1).halfWidthVolts).toBeCloseTo(0.0008, 12);
    const u = voltageUncertainty({ nominalVolts: 1, measuredVolts: 1 }, {});
    expect(u.specVolts * 1000).toBeCloseTo(0.8 / Math.sqrt(3), 12);
    expect((u.specVolts * 1000).toFixed(2)).toBe('0.46');
    const b = stepBudget(
      { nominalVolts: 1, measuredVolts: 1, hz: 65.4, uncertaintyCents: 0 },
      { clockUncertaintyPpm: 0 },
    );
    const ref = b.contributions.find((c) => c.source === 'reference-voltage')!;
    expect(formatUncertainty(ref.standardUncertainty)).toBe('0.55');
    expect(ref.distribution).toBe('rectangular');
  });
  it('reads 1 V to ±7 mV on a 3½-digit meter at ±(0.5 % + 2) (docs/facts.md)', () => {
    expect(meterHalfWidth(METER_PRESETS['3.5-digit'], 1).halfWidthVolts).toBeCloseTo(0.007, 12);
  });
  it('auto-ranges the resolution', () => {
    const m = METER_PRESETS['4.5-digit'];
    expect([0, 0.15, 1.9999, 2.5, 7, 25].map((v) => meterResolutionVolts(m, v))).toEqual([
      0.00001, 0.00001, 0.0001, 0.001, 0.001, 0.01,
    ]);
    expect(meterResolutionVolts({ ...m, resolutionVolts: 0.01 }, 1)).toBe(0.01);
  });
  it('names a bad field', () => {
    expect(() => meterHalfWidth({ ...METER_PRESETS['4.5-digit'], counts: -1 }, 1)).toThrow(
      'meter.counts must be a finite number at least 0, got -1',
    );
  });
});

describe('step budget', () => {
  it('combines uncorrelated contributions by root-sum-square (GUM 5.1.2) and expands with k from ν_eff', () => {
    const step: BudgetStep = {
      nominalVolts: 2,
      measuredVolts: null,
      hz: 130.8,
      uncertaintyCents: 0.05,
      components: { estimatorCents: 0.03, repeatabilityCents: 0.04, settlingCents: 0, dof: 4 },
    };
    const b = stepBudget(step, { clockUncertaintyPpm: 0, source: { percentOfReading: 0, offsetVolts: 0 } });
    expect(b.combinedStandard).toBeCloseTo(0.05, 12);
    expect(b.effectiveDof).toBeCloseTo(0.05 ** 4 / (0.04 ** 4 / 4), 10);
    expect(b.coverageFactor).toBeCloseTo(coverageFactor(b.effectiveDof), 12);
    expect(b.expanded).toBeCloseTo(b.coverageFactor * 0.05, 12);
    expect(b.dominant).toBe('repeatability');
  });
  it('takes an older step without components as all estimator', () => {
    const b = stepBudget(
      { nominalVolts: 0, measuredVolts: null, hz: 55, uncertaintyCents: 0.01 },
      { clockUncertaintyPpm: 0 },
    );
    expect(b.contributions.map((c) => c.source)).toEqual(['estimator']);
    expect(b.coverageFactor).toBe(2);
  });
  it('adds temperature as a scale change about the reference voltage', () => {
    const b = stepBudget(
      { nominalVolts: 5, measuredVolts: null, hz: 1760, uncertaintyCents: 0 },
      {
        clockUncertaintyPpm: 0,
        source: { percentOfReading: 0, offsetVolts: 0 },
        referenceVolts: 1,
        temperature: { celsius: 25, halfWidthKelvin: 0.5, scaleTempcoPpmPerKelvin: 100 },
      },
    );
    // 1200 · 100e-6 · 0.5/√3 cents per octave, times 4 V from the reference (derived).
    expect(b.combinedStandard).toBeCloseTo(1200 * 100e-6 * (0.5 / Math.sqrt(3)) * 4, 12);
  });
});

describe('budgets of fitted figures', () => {
  const volts = [0, 1, 2, 3, 4, 5, 6, 7];
  const steps: BudgetStep[] = volts.map((v) => ({
    nominalVolts: v,
    measuredVolts: v,
    hz: 32.703 * 2 ** v,
    uncertaintyCents: 0.01,
    components: { estimatorCents: 0.01, repeatabilityCents: 0, settlingCents: 0, dof: Infinity },
  }));
  const opts = { meter: METER_PRESETS['4.5-digit'] };
  const model = fitCalibrationModel(
    steps.map((s) => ({
      volts: s.nominalVolts,
      hz: s.hz,
      uncertaintyCents: stepFitUncertaintyCents(s, opts),
    })),
    { candidates: [{ hf: 'none', lowEnd: false }] },
  );
  if (model.kind !== 'ok') throw new Error('no model');
  it('leaves the clock out of the scale (its sensitivities sum to 0) and puts it in the 0 V pitch', () => {
    const s = scaleSensitivities(model);
    expect(s.reduce((a, b) => a + b, 0)).toBeCloseTo(0, 9);
    const p0 = predictionSensitivities(model, 0);
    expect(p0.reduce((a, b) => a + b, 0)).toBeCloseTo(1, 9);
    const scale = derivedBudget(model, steps, s, 'scale', 'cents per octave', 0, opts);
    expect(scale.contributions.some((c) => c.source === 'clock')).toBe(false);
    const zero = derivedBudget(model, steps, p0, 'pitch at 0 V', 'cents', 0, {
      ...opts,
      clockUncertaintyPpm: 10,
    });
    // 10 ppm is 0.0173 cent (clock.ts, derived from 1200·log2(1 + e)).
    expect(zero.contributions.find((c) => c.source === 'clock')!.standardUncertainty).toBeCloseTo(0.0173, 4);
  });
  it('gives a 4½-digit meter about ±0.4 cent per octave on the scale over 0–7 V (its gain part, derived)', () => {
    const scale = derivedBudget(
      model,
      steps,
      scaleSensitivities(model),
      'scale',
      'cents per octave',
      0,
      opts,
    );
    const ref = scale.contributions.find((c) => c.source === 'reference-voltage')!;
    // The 0.05 % of reading is common to every step: 1200 · 0.0005/√3 = 0.346 cent per octave (derived).
    expect(ref.standardUncertainty).toBeGreaterThan(0.346);
    expect(ref.standardUncertainty).toBeLessThan(0.4); // plus the independent counts part
    expect(scale.expanded).toBeGreaterThan(0.69);
  });
});

describe('formatUncertainty', () => {
  it.each([
    [0.0000000000000088, '0.0000000000000088'],
    [0.0001234, '0.00012'],
    [0.555, '0.56'],
    [2.345, '2.3'],
    [123.4, '123'],
  ])('shows %f as %s (two significant digits, GUM 7.2.6)', (v, s) => {
    expect(formatUncertainty(v)).toBe(s);
  });
});

describe('tolerance (guarded acceptance, ISO 14253-1)', () => {
  const at = (errorCents: number, expanded: number) => ({
    index: 0,
    volts: 3,
    errorCents,
    budget: { expanded, dominant: 'reference-voltage' as const },
  });
  it('is within only when |error| + U is inside', () => {
    expect(judgeTolerance([at(0.2, 0.25)], 0.5).verdict).toBe('within');
    expect(judgeTolerance([at(0.2, 0.35)], 0.5).verdict).toBe('cannot-tell');
    expect(judgeTolerance([at(-0.9, 0.3)], 0.5).verdict).toBe('outside');
  });
  it("says what would settle a can't-tell", () => {
    const r = judgeTolerance([at(0.2, 0.35)], 0.5);
    expect(r.steps[0].neededExpandedCents).toBeCloseTo(0.3, 12);
    expect(r.text).toContain('more accurate meter');
  });
  it('names a bad tolerance', () => {
    expect(() => judgeTolerance([], 0)).toThrow(
      'toleranceCents must be a finite number greater than 0 and at most 1200, got 0',
    );
  });
});

describe('formatUncertainty at a decade edge', () => {
  it('keeps two significant digits when rounding carries into the next decade', () => {
    expect(formatUncertainty(0.09996)).toBe('0.10');
    expect(formatUncertainty(9.96)).toBe('10');
    expect(formatUncertainty(0.000999)).toBe('0.0010');
  });
});
