// The one set of number formatters (dsp/format), shared by the command line, the app and the texts of dsp/.
import { describe, expect, it } from 'vitest';
import {
  formatCents,
  formatClock,
  formatDbfs,
  formatHz,
  formatNumber,
  formatPpm,
  formatSeconds,
  formatSigned,
  formatUncertainty,
  formatVolts,
  formatWithUncertainty,
  hzColumnDecimals,
  hzDecimalsForHundredthCent,
  MINUS_SIGN,
  NO_VALUE,
} from '../dsp/format/index.ts';

const M = '\u2212'; // the minus sign, ISO 80000-1:2009, 7.1.4 (not the hyphen-minus U+002D)

describe('the shared conventions', () => {
  it('writes the true minus sign and an em dash for no value', () => {
    expect(MINUS_SIGN).toBe(M);
    expect(NO_VALUE).toBe('\u2014');
  });

  // Every formatter: nothing, NaN and ±Infinity are an em dash, never "NaN" or "Infinity".
  const all: Array<[string, (v: number | null | undefined) => string]> = [
    ['formatHz', (v) => formatHz(v)],
    ['formatCents', (v) => formatCents(v)],
    ['formatUncertainty', (v) => formatUncertainty(v)],
    ['formatVolts', (v) => formatVolts(v)],
    ['formatSeconds', (v) => formatSeconds(v)],
    ['formatClock', (v) => formatClock(v)],
    ['formatPpm', (v) => formatPpm(v)],
    ['formatSigned', (v) => formatSigned(v, 2)],
    ['formatNumber', (v) => formatNumber(v, 2)],
    ['formatWithUncertainty', (v) => formatWithUncertainty(v, 0.1)],
  ];
  it.each(all)('%s writes "—" for null, undefined, NaN and ±Infinity', (_name, f) => {
    for (const v of [null, undefined, NaN, Infinity, -Infinity]) expect(f(v)).toBe('—');
  });

  it('formatDbfs writes −∞ for digital silence and "—" for the rest', () => {
    expect(formatDbfs(-Infinity)).toBe(`${M}∞ dBFS`);
    for (const v of [null, undefined, NaN, Infinity]) expect(formatDbfs(v)).toBe('—');
  });
});

describe('signed values (cents, ppm)', () => {
  // Rounding is that of Number.prototype.toFixed on the stored binary value (ECMA-262, 21.1.3.3):
  // 0.005 is stored as 0.005000000000000000104…, so it rounds up; 1.005 as 1.00499999999999989…, so down.
  it.each([
    [0, '0.00'],
    [-0, '0.00'],
    [0.004, '0.00'],
    [-0.004, '0.00'],
    [0.005, '+0.01'],
    [-0.005, `${M}0.01`],
    [1.005, '+1.00'],
    [-1.234, `${M}1.23`],
    [3.14159, '+3.14'],
    [-49.999, `${M}50.00`],
    [1e6, '+1000000.00'],
    [1e-12, '0.00'],
  ])('formatCents(%f) is %s', (c, s) => {
    expect(formatCents(c)).toBe(s);
  });

  it('takes the decimals asked for', () => {
    expect(formatCents(0.17314, 4)).toBe('+0.1731');
    expect(formatCents(-2.5, 0)).toBe(`${M}3`); // toFixed(0) of 2.5 rounds half away from zero (ECMA-262)
    expect(formatPpm(37.5)).toBe('+37.500');
    expect(formatPpm(-12.25)).toBe(`${M}12.250`);
    expect(formatPpm(-0.0004)).toBe('0.000');
  });

  it('never uses exponent notation below 1e21 (ECMA-262 toFixed)', () => {
    expect(formatSigned(1.5e20, 1)).toBe('+150000000000000000000.0');
  });
});

describe('frequency to the digits a hundredth of a cent needs', () => {
  // A cent is 1/1200 of an octave (A. J. Ellis, 1885): 0.01 cent is a frequency ratio of 2^(0.01/1200) − 1.
  const ratio = 2 ** (0.01 / 1200) - 1;
  it.each([1, 8.1758, 27.5, 32.703, 55, 100, 261.6256, 440, 1000, 4186.009, 12543.85, 20000, 96000])(
    'at %f Hz one unit in the last place is at most 0.01 cent, and one decimal fewer would not be',
    (hz) => {
      const d = hzDecimalsForHundredthCent(hz);
      expect(10 ** -d / hz).toBeLessThanOrEqual(ratio);
      if (d > 0) expect(10 ** -(d - 1) / hz).toBeGreaterThan(ratio);
      expect(formatHz(hz).split('.')[1]?.length ?? 0).toBe(d);
    },
  );

  it.each([
    [261.6255653, '261.626'], // C4 at A4 = 440 Hz (ISO 16:1975, 12-TET)
    [32.70319566, '32.7032'], // C1
    [4186.009045, '4186.01'], // C8
    [27.5, '27.5000'], // A0
  ])('formatHz(%f) is %s', (hz, s) => {
    expect(formatHz(hz)).toBe(s);
  });

  it('lets a column share the decimals of its lowest row', () => {
    expect(formatHz(880, hzDecimalsForHundredthCent(55))).toBe('880.0000');
  });

  it('caps the decimals at 8 for tiny frequencies and keeps huge ones plain', () => {
    expect(hzDecimalsForHundredthCent(1e-6)).toBe(8);
    expect(formatHz(1e-6)).toBe('0.00000100');
    expect(formatHz(1e9)).toBe('1000000000');
    expect(hzDecimalsForHundredthCent(0)).toBe(2);
    expect(formatHz(-5)).toBe(`${M}5.00`);
  });
});

describe('uncertainty with two significant digits (JCGM 100:2008, 7.2.6)', () => {
  it.each([
    [0.0001234, '0.00012'],
    [0.0999, '0.10'], // rounding carries into the next decade: still two significant digits
    [9.96, '10'],
    [0.555, '0.56'],
    [2.345, '2.3'],
    [17.2, '17'],
    [123.4, '123'], // from 100 on the whole units are kept (common practice, no source)
    [0, '0'],
    [-0, '0'],
    [8.8e-15, '0.0000000000000088'],
    [-0.0123, `${M}0.012`],
  ])('formatUncertainty(%f) is %s', (u, s) => {
    expect(formatUncertainty(u)).toBe(s);
  });

  it('writes values beyond plain notation with an exponent', () => {
    expect(formatUncertainty(1.23e-95)).toBe(`1.2e${M}95`);
    expect(formatUncertainty(4.56e22)).toBe('4.6e+22');
  });

  it('rounds a value to the decimals of its uncertainty', () => {
    expect(formatWithUncertainty(1.23456, 0.0123)).toBe('1.235');
    expect(formatWithUncertainty(-1.23456, 0.12)).toBe(`${M}1.23`);
    expect(formatWithUncertainty(2.5, 0)).toBe('2.5');
  });
});

describe('volts, dBFS, seconds and clock times', () => {
  it.each([
    [2, '2.000 V'],
    [-1, `${M}1.000 V`],
    [-0.0004, '0.000 V'], // rounds to zero: no sign
    [0.0005, '0.001 V'], // a millivolt is 1.2 cents at 1 V/oct (docs/facts.md)
    [-10.5, `${M}10.500 V`],
  ])('formatVolts(%f) is %s', (v, s) => {
    expect(formatVolts(v)).toBe(s);
  });

  it('leaves the unit off under a "V" heading', () => {
    expect(formatVolts(-2, false)).toBe(`${M}2.000`);
    expect(formatVolts(null, false)).toBe('—');
  });

  it('writes dBFS with one decimal', () => {
    expect(formatDbfs(-12.04)).toBe(`${M}12.0 dBFS`);
    expect(formatDbfs(0)).toBe('0.0 dBFS');
    expect(formatDbfs(-0.04)).toBe('0.0 dBFS');
    expect(formatDbfs(3.01)).toBe('3.0 dBFS');
  });

  it('writes seconds with a millisecond by default', () => {
    expect(formatSeconds(1.5)).toBe('1.500 s');
    expect(formatSeconds(12.34, 1)).toBe('12.3 s');
    expect(formatSeconds(-0.0001)).toBe('0.000 s');
  });

  it.each([
    [0, 0, '0:00'],
    [59.999, 0, '0:59'], // cut like a stopwatch, never rounded up to 1:00
    [75, 0, '1:15'],
    [3599.99, 0, '59:59'],
    [3725, 0, '1:02:05'],
    [123.45, 1, '2:03.4'],
    [0.3, 1, '0:00.3'],
    [3723.4, 1, '1:02:03.4'],
    [-5, 0, '0:00'],
    [360000, 0, '100:00:00'],
  ])('formatClock(%f, %i) is %s', (s, d, text) => {
    expect(formatClock(s, d)).toBe(text);
  });
});

describe('a column of frequencies', () => {
  // The decimals the lowest frequency needs (A. J. Ellis, 1885: 0.01 cent is a ratio of 5.78e-6).
  it('takes the decimals its lowest row needs, skipping missing values', () => {
    expect(hzColumnDecimals([55, 110, 880])).toBe(4);
    expect(hzColumnDecimals([4186.009, null, NaN, 1046.5])).toBe(3);
    expect(hzColumnDecimals([])).toBe(2);
  });
});

describe('misuse', () => {
  // House style: misuse throws a RangeError naming the parameter, its value and the range.
  it('names a bad number of decimals', () => {
    expect(() => formatCents(1, 2.5)).toThrow('decimals must be a whole number from 0 to 100, got 2.5');
    expect(() => formatNumber(1, -1)).toThrow('decimals must be a whole number from 0 to 100, got -1');
    expect(() => formatClock(1, 4)).toThrow('decimals must be a whole number from 0 to 3, got 4');
  });
});
