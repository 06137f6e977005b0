/**
 * Driving the oscillator's 1 V/oct input: calibration of the drive against a multimeter, MIDI note
 * and byte mapping, safety limits and ramps, the trim loop's pass history, and the simulated bench.
 * Pure functions on plain data; the Web Audio and Web MIDI adapters live in renderer/src/drive/.
 */
export * from './meter.ts';
export * from './calibrate.ts';
export * from './midi.ts';
export * from './safety.ts';
export * from './passes.ts';
export * from './sim.ts';
