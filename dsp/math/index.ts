/**
 * Shared arithmetic of pitch and measurement: the unit types (`Hertz`, `Cents`, `Volts`, …), cents and
 * note conversions (A. J. Ellis, 1885; MIDI 1.0 numbering) and the small statistics the uncertainty budget needs
 * (Student's t, coverage factors, Welch–Satterthwaite) and the weighted least-squares solver the fits share.
 * It depends on nothing else in `dsp/`.
 */
export * from './notes.ts';
export * from './stats.ts';
export * from './units.ts';
export * from './wls.ts';
