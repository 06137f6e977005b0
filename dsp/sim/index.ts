/**
 * The simulated bench: an analog 1 V/oct oscillator with its converter, HF and thermal errors, heard
 * through a simulated audio interface, for demos, tests and benchmarks.
 */
export * from './simulate.ts';
