import { describe, it, expect } from 'vitest';
import { buildErrorTable, type TableStep } from '../dsp/calibration/index.ts';
import { fitTracking } from '../dsp/model/index.ts';

const ok = (steps: readonly TableStep[], a4Hz?: number) => {
  const t = buildErrorTable(steps, a4Hz === undefined ? {} : { a4Hz });
  if (t.kind !== 'ok') throw new Error('expected a table');
  return t;
};

describe('buildErrorTable', () => {
  it('names notes in 12-TET with A4 = 440 Hz and middle C = C4', () => {
    // ISO 16:1975 (A4 = 440 Hz); docs/facts.md: C4 = 261.6256 Hz, C0 = 16.3516 Hz.
    const t = ok([
      { nominalVolts: 0, hz: 16.3516, uncertaintyCents: 0.01 },
      { nominalVolts: 4, hz: 261.6256, uncertaintyCents: 0.01 },
      { nominalVolts: 4.75, hz: 440, uncertaintyCents: 0.01 },
    ]);
    expect(t.rows.map((r) => r.noteName)).toEqual(['C0', 'C4', 'A4']);
    t.rows.forEach((r) => expect(Math.abs(r.noteCents)).toBeLessThan(0.001));
  });

  it('honours another A4', () => {
    const t = ok([{ nominalVolts: 0, hz: 442, uncertaintyCents: 0 }], 442);
    expect(t.rows[0]).toMatchObject({ noteName: 'A4', noteCents: 0 });
    expect(t.a4Hz).toBe(442);
  });

  it('computes cents from ideal and interval errors (Ellis: 1200·log2 of the ratio)', () => {
    // A perfect octave is 1200 cents; 219.8/110 is 1200·log2(1.998 18…) = 1198.425 cents (Ellis 1885).
    const t = ok([
      { nominalVolts: 0, hz: 110, uncertaintyCents: 0.03 },
      { nominalVolts: 1, hz: 219.8, uncertaintyCents: 0.04 },
      { nominalVolts: 2, hz: 440, uncertaintyCents: 0.01 },
    ]);
    const [a, b, c] = t.rows;
    expect(a).toMatchObject({
      centsFromIdeal: 0,
      centsFromIdealUncertainty: 0,
      intervalCents: null,
      intervalErrorCents: null,
    });
    expect(b.intervalCents).toBeCloseTo(1198.425, 3);
    expect(b.intervalErrorCents).toBeCloseTo(-1.575, 3);
    expect(b.centsFromIdeal).toBeCloseTo(-1.575, 3);
    expect(b.intervalUncertaintyCents).toBeCloseTo(0.05, 12); // √(0.03² + 0.04²)
    expect(c.centsFromIdeal).toBeCloseTo(0, 10);
    expect(c.intervalErrorCents).toBeCloseTo(1.575, 3);
    expect(t.spreadCents).toBeCloseTo(1.575, 3);
    expect(t.maxAbsIntervalErrorCents).toBeCloseTo(1.575, 3);
  });

  it('uses measured volts when given', () => {
    // 1 mV is 1.2 cents at 1 V/oct (docs/facts.md, derived): a step read as 1.002 V should be 2.4 cents higher.
    const hz1 = 110 * 2 ** 1.002;
    const t = ok([
      { nominalVolts: 0, hz: 110, uncertaintyCents: 0 },
      { nominalVolts: 1, measuredVolts: 1.002, hz: hz1, uncertaintyCents: 0 },
      { nominalVolts: 1, hz: hz1, uncertaintyCents: 0 },
    ]);
    expect(t.rows[1]).toMatchObject({ nominalVolts: 1, measuredVolts: 1.002, volts: 1.002 });
    expect(t.rows[1].centsFromIdeal).toBeCloseTo(0, 10);
    expect(t.rows[2].measuredVolts).toBeNull();
    expect(t.rows[2].centsFromIdeal).toBeCloseTo(2.4, 9);
  });

  it('round-trips: steps built from errors give those errors back', () => {
    const errors = [0, -0.5, 1.25, -3, 7.5];
    const steps = errors.map((e, i) => ({
      nominalVolts: i,
      hz: 55 * 2 ** (i + e / 1200),
      uncertaintyCents: 0.01,
    }));
    ok(steps).rows.forEach((r, i) => expect(r.centsFromIdeal).toBeCloseTo(errors[i], 9));
  });

  describe('descending and unordered plans', () => {
    // An oscillator whose octaves are 3.61 cents wide: f(V) = 55·2^(V·(1 + 3.61/1200)). Cents after
    // A. J. Ellis (1885): an interval of one volt is 1203.61 cents, so its error is +3.61 in either
    // direction of play; the fitted scale error has that same sign.
    const WIDE = 3.61;
    const hzAt = (v: number) => 55 * 2 ** (v * (1 + WIDE / 1200));
    const steps = (volts: readonly number[]): TableStep[] =>
      volts.map((v) => ({ nominalVolts: v, hz: hzAt(v), uncertaintyCents: 0.01 }));

    it.each([
      ['7,6,5', [7, 6, 5]],
      ['5,6,7', [5, 6, 7]],
      ['6,7,5', [6, 7, 5]],
      ['0,4,2,7,1', [0, 4, 2, 7, 1]],
    ])('plan %s: interval errors have the sign of the fit', (_name, volts) => {
      const t = ok(steps(volts));
      const fit = fitTracking(volts.map((v) => ({ volts: v, hz: hzAt(v), uncertaintyCents: 0.01 })));
      if (fit.kind !== 'ok') throw new Error('expected a fit');
      expect(fit.scaleErrorCentsPerOctave).toBeCloseTo(WIDE, 6);
      const lowest = Math.min(...volts);
      t.rows.forEach((r) => {
        // Rows keep the order of play.
        expect(r.nominalVolts).toBe(volts[r.index]);
        if (r.nominalVolts === lowest) {
          expect(r.intervalErrorCents).toBeNull();
          expect(r.centsFromIdeal).toBe(0);
        } else {
          const below = Math.max(...volts.filter((v) => v < r.nominalVolts));
          expect(volts[r.belowIndex as number]).toBe(below);
          expect(r.intervalErrorCents as number).toBeCloseTo(WIDE * (r.nominalVolts - below), 6);
          expect(Math.sign(r.intervalErrorCents as number)).toBe(Math.sign(fit.scaleErrorCentsPerOctave));
          expect(r.centsFromIdeal).toBeCloseTo(WIDE * (r.nominalVolts - lowest), 6);
        }
      });
    });

    it('repeated voltages: the later one takes its interval from the earlier (repeatability)', () => {
      const t = ok(steps([0, 1, 1]));
      expect(t.rows[1].belowIndex).toBe(0);
      expect(t.rows[2].belowIndex).toBe(1);
      expect(t.rows[2].intervalErrorCents as number).toBeCloseTo(0, 9);
    });
  });

  it('returns a typed non-answer for no steps', () => {
    expect(buildErrorTable([])).toEqual({ kind: 'none', reason: 'no-steps' });
  });

  it.each([
    [
      [{ nominalVolts: Number.NaN, hz: 1, uncertaintyCents: 0 }],
      'steps[0].nominalVolts must be a finite number, got NaN',
    ],
    [
      [{ nominalVolts: 0, measuredVolts: Infinity, hz: 1, uncertaintyCents: 0 }],
      'steps[0].measuredVolts must be a finite number when given, got Infinity',
    ],
    [
      [{ nominalVolts: 0, hz: -5, uncertaintyCents: 0 }],
      'steps[0].hz must be a finite number greater than 0, got -5',
    ],
    [
      [{ nominalVolts: 0, hz: 5, uncertaintyCents: -0.1 }],
      'steps[0].uncertaintyCents must be a finite number at least 0, got -0.1',
    ],
  ])('rejects invalid step %#', (steps, message) => {
    expect(() => buildErrorTable(steps)).toThrow(message);
  });

  it('rejects an invalid A4', () => {
    expect(() => buildErrorTable([], { a4Hz: 0 })).toThrow(
      'a4Hz must be a finite number greater than 0, got 0',
    );
  });
});
