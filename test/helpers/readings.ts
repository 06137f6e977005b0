/**
 * The one reading-stream generator of the tests: the pitch readings the tracker would give for a known true
 * pitch over time, at its ~20 readings per second, with seeded Gaussian noise in cents. The run reducer, the
 * plateau detector and the engine tests feed on it.
 *
 * The truth is a function of time; {@link segmentsTruth} builds one from holds, glides and silences. Noise is
 * σ·n cents with n standard normal (Box–Muller on the shared seeded generator, test/signals.ts), applied as
 * hz·2^(cents/1200) (1200 cents to the octave, A. J. Ellis, 1885).
 */
import type { PitchReading } from '../../dsp/pitch/index.ts';
import { gaussianNoise } from '../signals.ts';

/** The input level every generated reading carries: comfortably loud, nothing clipped. */
export const READING_LEVEL = { rmsDbfs: -14, peakDbfs: -8, clippedFraction: 0 } as const;

/** Details of an `ok` reading other than its pitch and time. */
export interface ReadingDetails {
  /** The reading's own 1σ uncertainty, cents. Default 0.02. */
  readonly uncertaintyCents?: number;
  /** Default 0.97. */
  readonly clarity?: number;
  /** Default 0.05 s. */
  readonly windowSeconds?: number;
  /** Default 8. */
  readonly harmonicsUsed?: number;
  /** Default {@link READING_LEVEL}. */
  readonly level?: { readonly rmsDbfs: number; readonly peakDbfs: number; readonly clippedFraction: number };
}

/** One `ok` reading of `hz` at `timeSeconds`. */
export function okReading(hz: number, timeSeconds: number, d: ReadingDetails = {}): PitchReading {
  return {
    kind: 'ok',
    hz,
    uncertaintyCents: d.uncertaintyCents ?? 0.02,
    clarity: d.clarity ?? 0.97,
    level: { ...(d.level ?? READING_LEVEL) },
    windowSeconds: d.windowSeconds ?? 0.05,
    harmonicsUsed: d.harmonicsUsed ?? 8,
    timeSeconds,
  };
}

/** A reading with no pitch (silence by default) at `timeSeconds`. */
export function noReading(
  timeSeconds: number,
  reason: 'silent' | 'no-pitch' = 'silent',
  level = READING_LEVEL,
): PitchReading {
  return { kind: 'none', reason, level: { ...level }, timeSeconds };
}

/** Options of {@link readingStream}. */
export interface StreamOptions {
  /** Readings per second. Default 20 (the pitch tracker's default). */
  readonly rate?: number;
  /** Noise of each reading, and its stated uncertainty, 1σ cents. Default 0.02. */
  readonly sigmaCents?: number;
  /** Seed of the noise. Default 7. */
  readonly seed?: number;
  /** Time of the first reading slot, seconds: readings fall on the grid k/rate from here. Default 0. */
  readonly fromSeconds?: number;
}

/**
 * Readings on the grid k/rate within [fromSeconds, toSeconds): an `ok` reading of the truth with noise where it
 * is a pitch, a silent one where it is null. The i-th reading takes the i-th noise sample.
 *
 * @example readingStream(() => 110, 3, { seed: 1 }) // 60 readings of 110 Hz ± 0.02 cent
 */
export function readingStream(
  truthAt: (t: number) => number | null,
  toSeconds: number,
  o: StreamOptions = {},
): PitchReading[] {
  const rate = o.rate ?? 20;
  const sigma = o.sigmaCents ?? 0.02;
  const first = Math.ceil((o.fromSeconds ?? 0) * rate - 1e-9);
  const n = Math.max(Math.floor(toSeconds * rate) - first, 0);
  const noise = gaussianNoise(n, 1, o.seed ?? 7);
  const readings: PitchReading[] = [];
  for (let k = 0; k < n; k++) {
    const t = (first + k) / rate;
    const f = truthAt(t);
    readings.push(
      f === null
        ? noReading(t)
        : okReading(f * Math.pow(2, (sigma * noise[k]) / 1200), t, { uncertaintyCents: sigma }),
    );
  }
  return readings;
}

/** A stretch of the true pitch: a hold (with an optional decaying thermal creep), a glide, or silence. */
export type Segment =
  | { kind: 'hold'; seconds: number; hz: number; creepCents?: number; tauSeconds?: number }
  | { kind: 'glide'; seconds: number; toHz: number }
  | { kind: 'silence'; seconds: number };

/** The true pitch of a list of segments. */
export interface SegmentsTruth {
  /** True pitch at time t, Hz (null in silence). */
  readonly truthAt: (t: number) => number | null;
  /** Start time of each segment, seconds. */
  readonly starts: number[];
  /** Where the last segment ends, seconds. */
  readonly totalSeconds: number;
}

/**
 * The truth of holds, glides and silences laid end to end. A hold's creep decays as creep·e^(−t/τ) cents (τ 1 s
 * unless given); a glide is exponential in Hz (linear in cents) from the last pitch before it.
 */
export function segmentsTruth(segs: readonly Segment[]): SegmentsTruth {
  const starts: number[] = [];
  let total = 0;
  for (const s of segs) {
    starts.push(total);
    total += s.seconds;
  }
  const startHz: number[] = [];
  let prevHz = 0;
  for (const s of segs) {
    startHz.push(prevHz);
    if (s.kind === 'hold') prevHz = s.hz;
    if (s.kind === 'glide') prevHz = s.toHz;
  }
  const truthAt = (t: number): number | null => {
    let i = segs.length - 1;
    while (i > 0 && t < starts[i]) i--;
    const s = segs[i];
    const dt = t - starts[i];
    if (s.kind === 'silence') return null;
    if (s.kind === 'hold')
      return s.hz * Math.pow(2, ((s.creepCents ?? 0) * Math.exp(-dt / (s.tauSeconds ?? 1))) / 1200);
    const from = startHz[i] || s.toHz;
    return from * Math.pow(s.toHz / from, Math.min(1, dt / s.seconds));
  };
  return { truthAt, starts, totalSeconds: total };
}
