// API placeholder: the implementation lands in the next commit.
import type { PitchReading } from './reading.ts';
import type { Hertz, Seconds } from './units.ts';

/** Options of a one-shot pitch measurement. */
export interface PitchOptions {
  /** Lowest fundamental to report, Hz. Default 10. */
  readonly minHz?: Hertz;
  /** Highest fundamental to report, Hz. Default 0.45 × sample rate, at most 20 kHz. */
  readonly maxHz?: Hertz;
  /** Time stamp to put on the reading, seconds. Default 0. */
  readonly timeSeconds?: Seconds;
}

/** Measures the fundamental of one buffer of mono samples. Never throws on bad samples. */
export function estimatePitch(
  _samples: Float32Array | Float64Array,
  _sampleRateHz: number,
  _options: PitchOptions = {},
): PitchReading {
  throw new Error('not implemented yet');
}
