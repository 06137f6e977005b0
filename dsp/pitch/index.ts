/**
 * The pitch engine: why a reading has no frequency (`reading`), window conditioning, the McLeod coarse
 * estimate with its octave check (`pitch`), the harmonic phase-slope refinement (`refine`), the streaming tracker
 * for live input (`stream`) with its decimation (`decimate`, also the recording's live pass), settled averages with the oscillator's own repeatability (`settled`) and the Allan
 * deviation behind it (`allan`).
 */
export * from './allan.ts';
export * from './condition.ts';
export * from './decimate.ts';
export * from './pitch.ts';
export * from './reading.ts';
export * from './refine.ts';
export * from './settled.ts';
export * from './stream.ts';
