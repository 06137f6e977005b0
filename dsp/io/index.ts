/**
 * Where samples and their clock come from: the WAV/RF64 reader with its structural checks (`wav`) and the
 * sound card's sample-clock correction (`clock`, the one place a clock error in ppm is applied to a frequency).
 */
export * from './clock.ts';
export * from './wav.ts';
