import { describe, it, expect } from 'vitest';
import { E24_VALUES, E96_VALUES, formatOhms, nearestPreferred } from '../dsp/converter/index.ts';

describe('E-series tables (IEC 60063)', () => {
  it('E24 is the 24 two-digit values of the standard', () => {
    // IEC 60063, E24 table.
    expect(E24_VALUES).toEqual([
      10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91,
    ]);
  });

  it('E24 departs from the rounded geometric series at exactly eight values', () => {
    // IEC 60063: the historical E24 values 27…47 and 82 differ from round(10·10^(i/24)).
    const differ = E24_VALUES.filter((v, i) => v !== Math.round(10 * 10 ** (i / 24)));
    expect(differ).toEqual([27, 30, 33, 36, 39, 43, 47, 82]);
  });

  it('E96 has 96 three-digit values equal to round(100·10^(i/96))', () => {
    // IEC 60063, E96 table: every value follows the rounded geometric series.
    expect(E96_VALUES).toHaveLength(96);
    expect(E96_VALUES[0]).toBe(100);
    expect(E96_VALUES.slice(0, 6)).toEqual([100, 102, 105, 107, 110, 113]);
    expect(E96_VALUES[E96_VALUES.length - 1]).toBe(976);
    E96_VALUES.forEach((v, i) => expect(v).toBe(Math.round(100 * 10 ** (i / 96))));
  });

  it('E96 contains every E48 value, i.e. every second E96 value is the E48 series', () => {
    // IEC 60063: E48 = round(100·10^(i/48)), the even-indexed E96 values.
    E96_VALUES.filter((_, i) => i % 2 === 0).forEach((v, i) =>
      expect(v).toBe(Math.round(100 * 10 ** (i / 48))),
    );
  });
});

describe('nearestPreferred', () => {
  describe.each([
    // [requested, series, nearest, lower, upper]; values from the IEC 60063 tables above.
    [3900, 'E24', 3900, 3900, 3900],
    [4000, 'E24', 3900, 3900, 4300],
    [4200, 'E24', 4300, 3900, 4300],
    [1813, 'E24', 1800, 1800, 2000],
    [1813, 'E96', 1820, 1780, 1820],
    [99728, 'E96', 100000, 97600, 100000],
    [99728, 'E24', 100000, 91000, 100000],
    [0.47, 'E24', 0.47, 0.47, 0.47],
    [9.9, 'E24', 10, 9.1, 10],
    [2.2e6, 'E24', 2.2e6, 2.2e6, 2.2e6],
    [4990, 'E96', 4990, 4990, 4990],
    [1000, 'E96', 1000, 1000, 1000],
  ] as const)('%d Ω in %s', (ohms, series, nearest, lower, upper) => {
    it(`is ${nearest} Ω`, () => {
      const r = nearestPreferred(ohms, series);
      expect(r.ohms).toBeCloseTo(nearest, 9);
      expect(r.lowerOhms).toBeCloseTo(lower, 9);
      expect(r.upperOhms).toBeCloseTo(upper, 9);
      expect(r.errorPercent).toBeCloseTo(((nearest - ohms) / ohms) * 100, 9);
    });
  });

  it('returns every table value unchanged in every decade', () => {
    for (const exp of [-2, -1, 0, 1, 3, 6]) {
      for (const v of E24_VALUES) {
        const ohms = v * 10 ** exp;
        const r = nearestPreferred(ohms, 'E24');
        expect(r.ohms / ohms).toBeCloseTo(1, 12);
        expect(Math.abs(r.errorPercent)).toBeLessThan(1e-9);
      }
    }
  });

  it('never errs by more than half the series step', () => {
    // IEC 60063 spacing: the widest E24 step is 13 → 15 (15.4 %), the widest E96 step 133 → 137 (3.0 %);
    // nearest-by-ratio never errs by more than the square root of the widest step ratio.
    const widest = (t: readonly number[]) => Math.max(...t.map((v, i) => (t[i + 1] ?? t[0] * 10) / v));
    const limit24 = (Math.sqrt(widest(E24_VALUES)) - 1) * 100;
    const limit96 = (Math.sqrt(widest(E96_VALUES)) - 1) * 100;
    expect(limit24).toBeCloseTo(7.42, 2);
    expect(limit96).toBeCloseTo(1.49, 2);
    for (let ohms = 1; ohms < 1e4; ohms *= 1.0037) {
      expect(Math.abs(nearestPreferred(ohms, 'E24').errorPercent)).toBeLessThanOrEqual(limit24 + 1e-9);
      expect(Math.abs(nearestPreferred(ohms, 'E96').errorPercent)).toBeLessThanOrEqual(limit96 + 1e-9);
    }
  });

  it('rejects invalid input', () => {
    expect(() => nearestPreferred(0, 'E24')).toThrow('ohms must be a finite number greater than 0, got 0');
    expect(() => nearestPreferred(Number.NaN, 'E96')).toThrow(RangeError);
    expect(() => nearestPreferred(100, 'E12' as 'E24')).toThrow("series must be 'E24' or 'E96', got E12");
  });
});

describe('formatOhms', () => {
  it.each([
    [99728.4, '99.73 kΩ'],
    [3900, '3.9 kΩ'],
    [470, '470 Ω'],
    [2.2e6, '2.2 MΩ'],
    [1820, '1.82 kΩ'],
    [0.47, '470 mΩ'],
    [999.96, '1 kΩ'],
  ])('%d Ω → %s', (ohms, text) => {
    expect(formatOhms(ohms)).toBe(text);
  });

  it('rejects invalid input', () => {
    expect(() => formatOhms(-1)).toThrow('ohms must be a finite number greater than 0, got -1');
    expect(() => formatOhms(1, 0)).toThrow('significantDigits must be an integer from 1 to 6, got 0');
  });
});
