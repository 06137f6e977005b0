import { describe, expect, it } from 'vitest';
import { adviseFromModel, resistorOutcomes } from '../dsp/advice/index.ts';
import type { BudgetStep } from '../dsp/model/index.ts';
import {
  checkPlausibility,
  fitCalibrationModel,
  hfCents,
  lineHz,
  modelHz,
  modelVolts,
  type CalibrationModelOk,
} from '../dsp/model/index.ts';
import { resetTimeErrorCents } from '../dsp/converter/index.ts';
import { bulkResistanceAlpha, trueHz } from '../dsp/sim/index.ts';
import { gaussianNoise } from './signals.ts';

// Demo scenario (invented): units from the Ostlund Lane workshop batch, measured 0…7 V from about C1.
const VOLTS = [0, 1, 2, 3, 4, 5, 6, 7];
const C1 = 32.7032; // C1 in 12-TET with A4 = 440 Hz (ISO 16:1975)

function steps(
  o: { scaleOctPerVolt?: number; resetSeconds?: number; bulkAlphaSeconds?: number; hz0?: number },
  sigma = 0.01,
  seed = 1,
  offsetsMv: Record<number, number> = {},
) {
  const nz = gaussianNoise(VOLTS.length, sigma, seed);
  return VOLTS.map((v, i) => ({
    volts: v,
    hz: trueHz(v + (offsetsMv[i] ?? 0) / 1000, { hz0: C1, ...o }) * 2 ** (nz[i] / 1200),
    uncertaintyCents: sigma,
  }));
}

function ok(m: ReturnType<typeof fitCalibrationModel>): CalibrationModelOk {
  if (m.kind !== 'ok') throw new Error(`no model: ${m.reason}`);
  return m;
}

describe('fitCalibrationModel', () => {
  it('chooses the straight line for straight data (AICc) and matches the straight-line fit', () => {
    const m = ok(fitCalibrationModel(steps({ scaleOctPerVolt: 1 + 1 / 1200 })));
    expect(m.terms).toEqual({ hf: 'none', lowEnd: false });
    expect(m.criterion).toBe('AICc');
    expect(m.scaleErrorCentsPerOctave).toBeCloseTo(m.straightLine!.scaleErrorCentsPerOctave, 9);
    expect(Math.abs(m.scaleErrorCentsPerOctave - 1)).toBeLessThan(0.01);
    expect(m.equivalentResetSeconds).toBeNull();
  });

  it.each([
    [0, 0],
    [1e-6, 0],
    [3e-6, 0],
    [0, 1],
    [2e-6, 0.5],
    [3e-6, 1],
  ])(
    'keeps HF droop (reset %f s, bulk %f Ω) out of the headline scale: within 0.1 cent per octave',
    (reset, ohms) => {
      // Issue 9 target; reset-time error −1200·log2(1 + f·t) and bulk resistance from dsp/converter/physics.ts (docs/facts.md).
      const truth = 0.7;
      const o = {
        scaleOctPerVolt: 1 + truth / 1200,
        resetSeconds: reset,
        bulkAlphaSeconds: bulkResistanceAlpha(ohms, 100e-6, 1000),
      };
      const m = ok(fitCalibrationModel(steps(o)));
      expect(Math.abs(m.scaleErrorCentsPerOctave - truth)).toBeLessThan(0.1);
      expect(Math.abs(1200 * Math.log2(m.hzAt0V / trueHz(0, { hz0: C1, ...o })))).toBeLessThan(0.1);
      if (reset + ohms > 0) {
        expect(m.terms.hf).not.toBe('none');
        // The straight line through every step is kept, and it is the one the droop tilts.
        expect(Math.abs(m.straightLine!.scaleErrorCentsPerOctave - truth)).toBeGreaterThan(0.5);
      }
    },
  );

  it('reports the HF term as an equivalent reset time', () => {
    const m = ok(fitCalibrationModel(steps({ resetSeconds: 2e-6 }, 0.005)));
    expect(m.equivalentResetSeconds! * 1e6).toBeCloseTo(2, 1);
    expect(m.mixtureResolved).toBe(false);
    // The model's HF term at 4 kHz against the physics of a 2 µs reset (derived, dsp/converter/physics.ts).
    expect(hfCents(m, 4000)).toBeCloseTo(resetTimeErrorCents(4000, 2e-6) + 0, 0);
  });

  it('gives pitch and voltage that invert each other', () => {
    const m = ok(fitCalibrationModel(steps({ resetSeconds: 1e-6 })));
    for (const v of [0, 2.5, 7]) expect(modelVolts(m, modelHz(m, v))).toBeCloseTo(v, 9);
    expect(lineHz(m, 7)).toBeGreaterThan(modelHz(m, 7));
  });

  it.each([10, 30, 55, 300])(
    'flags a %i mV wrong voltage at a middle step with the voltage it played',
    (mv) => {
      const m = ok(fitCalibrationModel(steps({ resetSeconds: 1.5e-6 }, 0.01, 3, { 3: mv })));
      expect(m.suspects.map((s) => s.index)).toEqual([3]);
      expect(m.suspects[0].likelyVolts).toBeCloseTo(3 + mv / 1000, 3);
      expect(m.usedIndices).not.toContain(3);
      // With the step left out the scale is the unit's again (issue 9: it had dropped to a third).
      expect(Math.abs(m.scaleErrorCentsPerOctave)).toBeLessThan(0.05);
    },
  );

  it('flags nothing on clean units with droop and noise', () => {
    for (let seed = 1; seed <= 20; seed++) {
      const m = ok(
        fitCalibrationModel(
          steps({ resetSeconds: (seed % 4) * 1e-6, scaleOctPerVolt: 1 + (seed - 10) / 3000 }, 0.02, seed),
        ),
      );
      expect(m.suspects).toEqual([]);
    }
  });

  it('names a bad point', () => {
    expect(() => fitCalibrationModel([{ volts: 0, hz: -1, uncertaintyCents: 0 }])).toThrow(
      'points[0].hz must be a finite number greater than 0, got -1',
    );
    expect(fitCalibrationModel([{ volts: 0, hz: 10, uncertaintyCents: 0 }])).toEqual({
      kind: 'none',
      reason: 'too-few-points',
    });
  });
});

describe('plausibility gates', () => {
  it('refuses points in the wrong order', () => {
    const pts = steps({}).map((p, i, a) => ({ ...p, hz: a[a.length - 1 - i].hz }));
    const r = checkPlausibility(ok(fitCalibrationModel(pts)));
    expect(r?.reason).toBe('falling-pitch');
    expect(r?.message).toContain('wrong order');
  });
  it('refuses half-volt steps given as whole volts', () => {
    const pts = VOLTS.map((v) => ({ volts: v, hz: C1 * 2 ** (v / 2), uncertaintyCents: 0.01 }));
    const r = checkPlausibility(ok(fitCalibrationModel(pts)));
    expect(r?.reason).toBe('implausible-scale');
    expect(r?.message).toContain('half-volt steps given as whole volts');
  });
  it('flags one mistyped voltage and names the voltage it played', () => {
    const pts = steps({}).map((p, i) => (i === 5 ? { ...p, volts: 6 } : p));
    const m = ok(fitCalibrationModel(pts));
    expect(checkPlausibility(m)).toBeNull();
    expect(m.suspects[0].index).toBe(5);
    expect(m.suspects[0].likelyVolts).toBeCloseTo(5, 3);
  });
});

function budgetSteps(pts: { volts: number; hz: number; uncertaintyCents: number }[]): BudgetStep[] {
  return pts.map((p) => ({
    nominalVolts: p.volts,
    measuredVolts: null,
    hz: p.hz,
    uncertaintyCents: p.uncertaintyCents,
  }));
}

describe('adviseFromModel', () => {
  it('does not tell a unit with a perfect scale and droop to trim its scale; names the HF step and its target', () => {
    const pts = steps({ resetSeconds: 2e-6 }, 0.005);
    const m = ok(fitCalibrationModel(pts));
    const a = adviseFromModel({
      model: m,
      steps: budgetSteps(pts),
      toleranceCents: 1,
      offsetTarget: { volts: 0, hz: C1 },
    });
    const scale = a.items.find((i) => i.trimmer === 'scale')!;
    expect(scale.status).not.toBe('adjust');
    const hf = a.items.find((i) => i.trimmer === 'hf')!;
    expect(hf.status).toBe('adjust');
    expect(hf.target!.volts).toBe(7); // 4186 Hz: the highest step at or below 5 kHz
    expect(hf.text).toContain('7.000 V step');
    expect(hf.text).toContain('equivalent reset time of 2.0 µs');
    // The target reading is the top octave with the droop taken out (docs/facts.md: trim HF on an octave near
    // 2–5 kHz): 1200 cents from the 6 V step to the 7 V step. Now the octave is short by the reset-time error
    // −1200·log2(1 + f·t) at 4186 Hz less that at 2093 Hz (docs/facts.md, "The exponential converter"), about 7.2 cents.
    expect(hf.target!.fromVolts).toBe(6);
    expect(hf.target!.intervalCents).toBeCloseTo(1200, 1);
    const short = resetTimeErrorCents(C1 * 128, 2e-6) - resetTimeErrorCents(C1 * 64, 2e-6);
    expect(hf.target!.nowIntervalCents - 1200).toBeCloseTo(short, 1);
  });

  it('names a suspect step and says to re-check its voltage', () => {
    const pts = steps({}, 0.01, 2, { 3: 55 });
    const m = ok(fitCalibrationModel(pts));
    const a = adviseFromModel({ model: m, steps: budgetSteps(pts) });
    expect(a.items[0].suspect?.index).toBe(3);
    expect(a.items[0].text).toContain('re-check that voltage at the input jack');
    expect(a.next).toContain('step 4 (3.000 V)');
  });

  it('gives no trim for steps in the wrong order', () => {
    const pts = steps({}).map((p, i, arr) => ({ ...p, hz: arr[arr.length - 1 - i].hz }));
    const a = adviseFromModel({ model: ok(fitCalibrationModel(pts)), steps: budgetSteps(pts) });
    expect(a.refusal?.reason).toBe('falling-pitch');
    expect(a.items.every((i) => i.status !== 'adjust')).toBe(true);
  });

  it("says can't tell when the uncertainty straddles the tolerance, naming what would settle it", () => {
    const pts = steps({ scaleOctPerVolt: 1 + 0.05 / 1200 }, 0.01);
    const a = adviseFromModel({
      model: ok(fitCalibrationModel(pts)),
      steps: budgetSteps(pts),
      toleranceCents: 0.5,
      offsetTarget: { volts: 0, hz: C1 },
    });
    // Nominal volts at 0.1 % (docs/facts.md, common practice): 7 mV at 7 V is ±8.4 cents, so nothing at ±0.5 cent can be proven.
    expect(a.tolerance.verdict).toBe('cannot-tell');
    expect(a.tolerance.text).toContain('meter');
    expect(a.allWithinTolerance).toBe(false);
  });
});

describe('resistor advice', () => {
  it('never suggests a part that can leave a larger error than no change', () => {
    // A 100 kΩ/1.8 kΩ divider (common practice values): 3.2 cents per octave narrow. A 1 % part moves the gain
    // by up to about 1 %, 12 cents per octave, so no fixed resistor beats the trimmer here.
    const r = resistorOutcomes({ topology: 'divider', seriesOhms: 100e3, shuntOhms: 1.8e3 }, 1 - 3.2 / 1200);
    expect(r.length).toBe(2);
    for (const x of r) expect(x.withTolerance!.betterThanNoChange).toBe(false);
  });
  it('suggests one when even its tolerance leaves less error', () => {
    // 5 % narrow octaves (60 cents): a 0.1 % part lands within a few cents.
    const r = resistorOutcomes(
      { topology: 'inverting-summer', inputOhms: 100e3, feedbackOhms: 100e3 },
      0.95,
      0.1,
    );
    expect(r.some((x) => x.withTolerance!.betterThanNoChange)).toBe(true);
  });
});
