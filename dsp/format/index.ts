/**
 * How numbers are written for people: the one set of formatters the command line, the app, the printed
 * report and the texts `dsp/` writes itself (advice, tolerance) all use. Frequencies to the digits that
 * resolve a hundredth of a cent, signed cents, uncertainties at two significant digits (JCGM 100:2008 7.2.6),
 * volts, dBFS, seconds, clock times and ppm. Every signed value is written with a true minus sign (U+2212),
 * and a missing or non-finite value is an em dash, never "NaN". It depends only on `math/`.
 */
export * from './numbers.ts';
