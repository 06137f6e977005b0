import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  DEFAULT_PLAN_ID,
  PLAN_LIMITS,
  PLAN_PRESETS,
  customPlan,
  formatPlan,
  parsePlan,
  presetPlan,
  semitonePlan,
  validatePlanVolts,
  type PresetPlanId,
} from '../dsp/calibration/index.ts';

const okVolts = (text: string) => {
  const r = parsePlan(text);
  if (r.kind !== 'ok') throw new Error(`expected ok for ${JSON.stringify(text)}, got ${r.message}`);
  return r.volts;
};

describe('presets', () => {
  it.each([
    ['octaves-0-4', [0, 1, 2, 3, 4]],
    ['octaves-0-7', [0, 1, 2, 3, 4, 5, 6, 7]],
    ['octaves-0-9', [0, 1, 2, 3, 4, 5, 6, 7, 8, 9]],
    ['half-volts-0-7', [0, 0.5, 1, 1.5, 2, 2.5, 3, 3.5, 4, 4.5, 5, 5.5, 6, 6.5, 7]],
  ] as const)('%s has exactly %j', (id, volts) => {
    expect(presetPlan(id as PresetPlanId).volts).toEqual(volts);
  });

  it('the semitone check is 13 points k/12 V, 83.333 mV apart', () => {
    // At 1 V/oct a semitone is 83.333 mV (docs/facts.md): exact values k/12 V.
    const v = presetPlan('semitones-0-1').volts;
    expect(v).toHaveLength(13);
    v.forEach((x, k) => expect(x).toBe(k / 12));
    expect((v[1] - v[0]) * 1000).toBeCloseTo(83.333, 3);
    semitonePlan(2).volts.forEach((x, k) => expect(x - 2).toBeCloseTo(k / 12, 14));
  });

  it('default plan is 0 to 7 V', () => {
    expect(DEFAULT_PLAN_ID).toBe('octaves-0-7');
    expect(presetPlan().volts).toEqual([0, 1, 2, 3, 4, 5, 6, 7]);
  });

  it('ids are unique and every preset obeys the limits', () => {
    expect(new Set(PLAN_PRESETS.map((p) => p.id)).size).toBe(PLAN_PRESETS.length);
    for (const p of PLAN_PRESETS) expect(validatePlanVolts(p.volts).kind).toBe('ok');
  });

  it('misuse throws with the allowed values', () => {
    expect(() => presetPlan('nope' as PresetPlanId)).toThrow(
      new RangeError(
        'id must be one of octaves-0-4, octaves-0-7, octaves-0-9, half-volts-0-7, semitones-0-1, got "nope"',
      ),
    );
    expect(() => semitonePlan(11.5)).toThrow(
      new RangeError('fromVolts must be a finite number in [-12, 11] V, got 11.5'),
    );
    expect(() => customPlan([1])).toThrow(
      new RangeError('volts: the plan has 1 point; at least 2 are needed'),
    );
  });
});

describe('parsePlan accepts', () => {
  it.each([
    ['0,1,2,3', [0, 1, 2, 3]],
    ['0, 1, 2, 3', [0, 1, 2, 3]],
    ['0; 2\n4', [0, 2, 4]],
    ['0-7', [0, 1, 2, 3, 4, 5, 6, 7]],
    ['0 - 3', [0, 1, 2, 3]],
    ['0..3', [0, 1, 2, 3]],
    ['0 to 2', [0, 1, 2]],
    ['0-2/0.5', [0, 0.5, 1, 1.5, 2]],
    ['0-2 by 0.5', [0, 0.5, 1, 1.5, 2]],
    ['0:0.5:2', [0, 0.5, 1, 1.5, 2]],
    ['2 : 0.5 : 0', [2, 1.5, 1, 0.5, 0]],
    ['-1V:1V:1V', [-1, 0, 1]],
    ['3-0', [3, 2, 1, 0]],
    ['-2-1', [-2, -1, 0, 1]],
    ['-3--1', [-3, -2, -1]],
    ['1V, 2.5V, 4 v', [1, 2.5, 4]],
    ['0-1, 3, 5-6', [0, 1, 3, 5, 6]],
    ['.5, 1e0', [0.5, 1]],
    ['4, 0, 2', [4, 0, 2]],
  ])('%j → %j', (text, volts) => {
    expect(okVolts(text)).toEqual(volts);
  });

  it('a semitone range with a rounded step gives exact k/12 V', () => {
    // 0.08333 V lands on 1 V within 0.1 mV (12 × 0.08333 = 0.99996); points are spread evenly to 1 V exactly.
    const v = okVolts('0-1/0.08333');
    expect(v).toEqual(presetPlan('semitones-0-1').volts);
  });
});

describe('parsePlan options (analyze --points, simulate --plan)', () => {
  it('one point and repeats when asked; never beyond the one voltage limit', () => {
    expect(parsePlan('3', { minPoints: 1 })).toEqual({ kind: 'ok', volts: [3] });
    expect(parsePlan('0,1,0', { allowRepeats: true })).toEqual({ kind: 'ok', volts: [0, 1, 0] });
    expect(parsePlan('0,1,0').kind).toBe('error');
    expect(parsePlan('0:1:13', { minPoints: 1, allowRepeats: true })).toMatchObject({
      reason: 'out-of-range',
    });
  });
});

describe('parsePlan refuses, saying why', () => {
  it.each([
    ['', 'empty', 'the plan is empty: type voltages such as "0, 1, 2, 3" or a range such as "0-7"'],
    ['  , ;', 'empty', 'the plan is empty: type voltages such as "0, 1, 2, 3" or a range such as "0-7"'],
    ['0, one, 2', 'not-a-number', '"one" is neither a voltage (like 2.5) nor a range (like 0-7 or 0:0.5:7)'],
    ['0, 1e999', 'not-a-number', '"1e999" is not a finite number of volts'],
    ['0-4/0', 'bad-step', 'the step in "0-4/0" must be a positive number of volts, got 0'],
    ['0-4/-1', 'bad-step', 'the step in "0-4/-1" must be a positive number of volts, got -1'],
    [
      '0-1/0.3',
      'range-misses-end',
      'steps of 0.3 V from 0 V do not land on 1 V (the nearest is 0.9 V); choose a step that divides 1 V',
    ],
    [
      '0-1/0.0833',
      'range-misses-end',
      'steps of 0.0833 V from 0 V do not land on 1 V (the nearest is 0.9996 V); choose a step that divides 1 V',
    ],
    ['0, 1, 1', 'duplicate', 'point 3 (1 V) repeats point 2 (1 V)'],
    ['2, 0-3', 'duplicate', 'point 4 (2 V) repeats point 1 (2 V)'],
    ['1, 1.00005', 'duplicate', 'point 2 (1.00005 V) repeats point 1 (1 V)'],
    ['2-2', 'duplicate', 'the range "2-2" starts and ends at the same voltage'],
    ['0, 13', 'out-of-range', 'point 2 (13 V) lies outside -12…+12 V'],
    ['-12.5, 0', 'out-of-range', 'point 1 (-12.5 V) lies outside -12…+12 V'],
    ['5', 'too-few-points', 'the plan has 1 point; at least 2 are needed'],
    ['0-10/0.1', 'too-many-points', 'the plan has 101 points; at most 64 are allowed'],
    ['0-12/0.000001', 'too-many-points', 'the plan has 12000001 points; at most 64 are allowed'],
  ])('%j', (text, reason, message) => {
    expect(parsePlan(text)).toEqual({ kind: 'error', reason, message });
  });

  it('never throws, whatever is typed', () => {
    fc.assert(
      fc.property(fc.string({ maxLength: 60 }), (text) => {
        const r = parsePlan(text);
        expect(['ok', 'error']).toContain(r.kind);
        if (r.kind === 'ok') expect(validatePlanVolts(r.volts).kind).toBe('ok');
      }),
      { numRuns: 2000 },
    );
    fc.assert(
      fc.property(
        fc.array(fc.constantFrom('0', '1', '-', '/', ',', '.', 'e', 'V', ' ', '9', '..', 'to')),
        (parts) => {
          expect(['ok', 'error']).toContain(parsePlan(parts.join('')).kind);
        },
      ),
      { numRuns: 2000 },
    );
    expect(parsePlan(undefined as unknown as string).kind).toBe('error');
  });
});

describe('formatPlan', () => {
  it.each([
    [[0, 1, 2, 3, 4, 5, 6, 7], '0-7'],
    [[0, 0.5, 1, 1.5], '0:0.5:1.5'],
    [[7, 6, 5], '7-5'],
    [[0, 2, 3], '0, 2, 3'],
    [[0, 1], '0, 1'],
  ])('%j → %j', (volts, text) => {
    expect(formatPlan(volts)).toBe(text);
  });

  it('round-trips every preset exactly', () => {
    for (const p of PLAN_PRESETS) expect(okVolts(formatPlan(p.volts))).toEqual(p.volts);
  });

  it('round-trips random valid plans to within 1e-9 V', () => {
    fc.assert(
      fc.property(
        fc.uniqueArray(fc.integer({ min: -12000, max: 12000 }), {
          minLength: 2,
          maxLength: PLAN_LIMITS.maxPoints,
        }),
        (mv) => {
          const volts = mv.map((m) => m / 1000);
          const back = okVolts(formatPlan(volts));
          expect(back).toHaveLength(volts.length);
          back.forEach((v, i) => expect(Math.abs(v - volts[i])).toBeLessThan(1e-9));
        },
      ),
      { numRuns: 500 },
    );
  });
});
