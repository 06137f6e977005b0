/**
 * The exponential converter's physics and parts: the thermal voltage and volts per octave at the
 * converter's base, its temperature coefficient, the high-frequency errors (core reset time, bulk emitter
 * resistance) with their fits, and the E24/E96 preferred resistor values (IEC 60063) the advice picks from.
 */
export * from './eseries.ts';
export * from './physics.ts';
