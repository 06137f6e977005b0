/**
 * The input side of a recording's analysis: where the samples come from and the live pass over them.
 *
 * A recording is read as a {@link SampleSource}: one channel, any stretch of frames on request. It may be
 * an array in memory ({@link arraySource}) or a WAV file read a block at a time ({@link wavChannelSource},
 * over `dsp/io/wav.ts`), so a recording of any length is analysed in bounded memory: the live pass reads it
 * once from start to end in blocks of about a second, and the precise measurement of each step later reads
 * only that step's window.
 *
 * {@link livePass} runs the streaming tracker (`dsp/pitch/stream.ts`) over the blocks, as the live view would
 * have, and marks the silent stretches (5 ms blocks below −70 dBFS RMS after removing their mean) so that
 * a window more than half silent counts as no reading. It also keeps the few totals the messages need: the
 * mean level (a DC-only file), the sample range, whether any sample was non-zero.
 *
 * Pure: no Node or DOM APIs.
 */
import type { PitchReading } from '../pitch/index.ts';
import { Decimator, PitchTracker, type TrackerOptions } from '../pitch/index.ts';
import type { Hertz, Seconds } from '../math/index.ts';
import { readWavFrames, type ByteSource, type WavLayout } from '../io/index.ts';
import { decimationFactorFor } from './decimate.ts';

/** One channel of a recording, read a stretch at a time. */
export interface SampleSource {
  /** Frames per second, Hz. */
  readonly sampleRateHz: Hertz;
  /** Number of frames, ≥ 0. */
  readonly frameCount: number;
  /**
   * Copies frames `[startFrame, startFrame + out.length)` into `out` (normalised to ±1 full scale).
   *
   * @returns Frames copied: `out.length`, or fewer only at the end of the recording.
   */
  read(startFrame: number, out: Float32Array): number;
}

/**
 * A {@link SampleSource} over samples already in memory.
 *
 * @param samples - One channel.
 * @param sampleRateHz - Its sample rate, Hz.
 * @example arraySource(new Float32Array(48000), 48000).frameCount // 48000
 */
export function arraySource(samples: Float32Array, sampleRateHz: Hertz): SampleSource {
  return {
    sampleRateHz,
    frameCount: samples.length,
    read(startFrame, out) {
      const n = Math.max(0, Math.min(out.length, samples.length - startFrame));
      out.set(samples.subarray(startFrame, startFrame + n));
      return n;
    },
  };
}

/**
 * One channel of a WAV file as a {@link SampleSource}, decoded a stretch at a time from its bytes.
 *
 * @param src - The file's bytes.
 * @param layout - Its layout, from `openWav` (`dsp/io/wav.ts`).
 * @param channelIndex - Zero-based channel, below `layout.channelCount`.
 * @throws RangeError for a channel the file does not have.
 * @example wavChannelSource(bytesSource(file), layout, 0).read(0, new Float32Array(4800)) // 4800
 */
export function wavChannelSource(src: ByteSource, layout: WavLayout, channelIndex: number): SampleSource {
  if (!Number.isInteger(channelIndex) || channelIndex < 0 || channelIndex >= layout.channelCount) {
    throw new RangeError(
      `channelIndex must be an integer from 0 to ${layout.channelCount - 1}, got ${channelIndex}`,
    );
  }
  let scratch = new Uint8Array(0);
  return {
    sampleRateHz: layout.sampleRateHz,
    frameCount: layout.frameCount,
    read(startFrame, out) {
      const bytes = out.length * layout.frameBytes;
      if (scratch.length < bytes) scratch = new Uint8Array(bytes);
      return readWavFrames(src, layout, startFrame, out.length, channelIndex, out, scratch);
    },
  };
}

/** Blocks of this length, seconds, are tested for silence. */
export const SILENCE_BLOCK_SECONDS: Seconds = 0.005;
/** A block quieter than this RMS level (after removing its mean) is silent, dBFS: the estimator's floor. */
export const SILENCE_DBFS = -70;
/** Frames read per block of the live pass, about 1.4 s at 48 kHz (a whole number of silence blocks). */
const LIVE_BLOCK_FRAMES = 65536;

/** What the live pass found. */
export interface LivePass {
  /**
   * The tracker's readings in order, stamped at the end of their windows (evenly spaced); a reading whose
   * window is more than half silent is replaced by a `silent` one.
   */
  readonly readings: PitchReading[];
  /** Each reading's stamp mapped to its window's centre, seconds (where the pitch it reports was heard). */
  readonly centreAt: Map<number, number>;
  /** Silent stretches as sorted, disjoint `[start, end)` frame ranges (flattened pairs). */
  readonly quietRuns: number[];
  /** True when any sample is non-zero. */
  readonly anySignal: boolean;
  /** Mean of all samples (the DC level), full scale. */
  readonly meanLevel: number;
  /** Frames read. */
  readonly frameCount: number;
  /** True when the pass stopped early on `stopAfterBelowRange` below-range readings (the rest was not read). */
  readonly stoppedBelowRange?: boolean;
}

/** Tracker settings of the live pass (a subset of {@link TrackerOptions}). */
export type LivePassOptions = Pick<
  TrackerOptions,
  'readingsPerSecond' | 'liveHarmonics' | 'minCycles' | 'minWindowSeconds' | 'lowestHz'
> & {
  /**
   * Read the recording decimated to about 24 kHz (see `decimate.ts`), which is faster and changes no
   * pitch; a recording with its sound above 8.8 kHz is read at its own rate anyway. Default true.
   */
  readonly decimate?: boolean;
  /**
   * Stop reading once this many readings have said the pitch is below the tracker's reach ('below-range'):
   * the caller then reads the recording again following lower pitches, and the rest of this pass would be
   * wasted. The pass comes back with `stoppedBelowRange` set. Default: never stop.
   */
  readonly stopAfterBelowRange?: number;
};

/**
 * Reads a recording once from start to end in blocks, runs the live tracker over it and marks its silent
 * stretches. Memory: one block, the tracker's one-second ring, and the readings (one object per reading).
 * The tracker reads the recording decimated to about 24 kHz unless `opts.decimate` is false or the sound
 * lies mostly above the decimated passband (then the pass is made again at the file's own rate); readings
 * are stamped in the recording's own time either way.
 *
 * @param source - The recording.
 * @param opts - Tracker settings (readings per second, harmonics, cycles per window, shortest window).
 * @param onProgress - Called after each block with the fraction of frames read, 0…1.
 * @returns The readings and totals; see {@link LivePass}.
 * @throws RangeError for tracker options out of range (from `PitchTracker`).
 * @example livePass(arraySource(samples, 48000), { readingsPerSecond: 10 }).readings.length // 10 per second
 */
export function livePass(
  source: SampleSource,
  opts: LivePassOptions,
  onProgress?: (fraction: number) => void,
): LivePass {
  const factor = opts.decimate === false ? 1 : decimationFactorFor(source.sampleRateHz);
  if (factor > 1) {
    // Decimated, the pass sees half the samples (at 48 kHz); a file whose sound lies mostly above the
    // decimated passband (a step over about 9.6 kHz) is read again at its own rate.
    let reported = 0;
    const quick = passAt(source, opts, factor, (f) => onProgress?.((reported = f)));
    if (quick !== null) return quick;
    // Progress carries on from where the decimated pass stopped rather than going back.
    return passAt(source, opts, 1, (f) => onProgress?.(reported + (1 - reported) * f))!;
  }
  return passAt(source, opts, 1, onProgress)!;
}

/**
 * Progress of a task made of passes whose number is not known in advance (a pass may have to be made again):
 * each new pass carries on from where the bar stands, over what is left of it, so the bar never goes back.
 * The last pass ends it at 1.
 *
 * @example
 * const bar = monotoneProgress(show);
 * const first = bar.pass(); first(0.5);  // shows 0.5
 * const again = bar.pass(); again(0.5);  // shows 0.75
 */
export function monotoneProgress(onProgress?: (fraction: number) => void): {
  pass(): (fraction: number) => void;
} {
  let shown = 0;
  return {
    pass() {
      const from = shown;
      return (f) => {
        shown = from + (1 - from) * Math.min(1, Math.max(0, f));
        onProgress?.(shown);
      };
    },
  };
}

/**
 * A decimated block whose signal kept less than this fraction of its energy (about its mean) through the
 * anti-alias filter had most of its sound above the passband: the pass is made again without decimation.
 */
const MIN_KEPT_ENERGY = 0.5;

/**
 * The live pass with the tracker reading the recording decimated by `factor` (1: as it is). Null when a
 * block lost more than half its energy to the decimation filter.
 */
function passAt(
  source: SampleSource,
  opts: LivePassOptions,
  factor: number,
  onProgress?: (fraction: number) => void,
): LivePass | null {
  const fs = source.sampleRateHz;
  const { decimate: _d, stopAfterBelowRange: _s, ...trackerOptions } = opts;
  const tracker = new PitchTracker({
    sampleRateHz: fs / factor,
    ...trackerOptions,
    maxWindowSeconds: 1,
    historySeconds: 1,
    // Sub-audio pitches: the live pass needs no more of the decimated stream than one window.
    ...(opts.lowestHz !== undefined ? { lowHistorySeconds: (opts.minCycles ?? 10) / opts.lowestHz } : {}),
  });
  const decimator = factor > 1 ? new Decimator(factor) : null;
  const quietBlock = Math.max(1, Math.round(SILENCE_BLOCK_SECONDS * fs));
  const limit = quietBlock * Math.pow(10, SILENCE_DBFS / 10); // sum of squares of a block at the floor
  const blockFrames = quietBlock * Math.ceil(LIVE_BLOCK_FRAMES / quietBlock);
  const block = new Float32Array(blockFrames);
  const small = decimator ? new Float32Array(decimator.outputLength(blockFrames)) : block;
  const quietRuns: number[] = [];
  const scan = new Float64Array(2);
  const raw: PitchReading[] = [];
  const stopAfter = opts.stopAfterBelowRange ?? Infinity;
  let belowRange = 0;
  const keep = (r: PitchReading): void => {
    raw.push(r);
    if (r.kind === 'none' && r.reason === 'below-range') belowRange++;
  };
  let runStart = -1;
  let anySignal = false;
  let sum = 0;
  let done = 0;
  const total = source.frameCount;
  while (done < total) {
    const got = source.read(done, block.subarray(0, Math.min(blockFrames, total - done)));
    if (got <= 0) break;
    const x = got === blockFrames ? block : block.subarray(0, got);
    let blockSquares = 0;
    for (let b = 0; b < got; b += quietBlock) {
      const e = Math.min(got, b + quietBlock);
      const blockSum = scanBlock(x, b, e, scan);
      sum += blockSum;
      blockSquares += scan[0];
      if (!anySignal && scan[1] !== 0) anySignal = true;
      const quiet = scan[0] * (quietBlock / (e - b)) < limit;
      if (quiet && runStart < 0) runStart = done + b;
      if (!quiet && runStart >= 0) {
        quietRuns.push(runStart, done + b);
        runStart = -1;
      }
    }
    if (decimator) {
      const n = decimator.push(x, small);
      const y = small.subarray(0, n);
      // Energy kept, against the block's own (both about their means, per frame of the input).
      if (
        blockSquares > limit * (got / quietBlock) &&
        factor * squaresAboutMean(y) < MIN_KEPT_ENERGY * blockSquares
      ) {
        return null;
      }
      tracker.push(y, keep);
    } else {
      tracker.push(x, keep);
    }
    done += got;
    onProgress?.(total > 0 ? done / total : 1);
    if (belowRange >= stopAfter) break;
  }
  if (runStart >= 0) quietRuns.push(runStart, done);

  // Readings are stamped with the moment they were made (the end of the window), evenly spaced, which is
  // what the plateau detector wants; `centreAt` maps those moments back to the windows' centres, since
  // windows change length with the pitch. A window more than half silent is not a reading of the step:
  // after a silence the tracker has no hint and reads over its longest window, which would bridge a short
  // silence between two holds. Decimated readings are moved back by the filter's delay (the last output
  // of a window is the input `factor − 1` frames before the window's end, delayed by the filter).
  const shift = decimator ? (decimator.delayFrames + factor - 1) / fs : 0;
  const readings: PitchReading[] = [];
  const centreAt = new Map<number, number>();
  for (const r0 of raw) {
    const r = shift === 0 ? r0 : { ...r0, timeSeconds: r0.timeSeconds - shift };
    const t = r.timeSeconds;
    const centre = r.kind === 'ok' ? t - r.windowSeconds / 2 : t;
    centreAt.set(t, centre);
    if (
      r.kind === 'ok' &&
      silentOverlap(quietRuns, centre - r.windowSeconds / 2, centre + r.windowSeconds / 2, fs) >
        r.windowSeconds / 2
    ) {
      readings.push({ kind: 'none', reason: 'silent', level: r.level, timeSeconds: t });
    } else {
      readings.push(r);
    }
  }
  return {
    readings,
    centreAt,
    quietRuns,
    anySignal,
    meanLevel: done > 0 ? sum / done : 0,
    frameCount: done,
    ...(belowRange >= stopAfter ? { stoppedBelowRange: true } : {}),
  };
}

/** Sum of squares of `y` about its mean. */
function squaresAboutMean(y: Float32Array): number {
  let s = 0;
  for (let i = 0; i < y.length; i++) s += y[i];
  const mean = y.length > 0 ? s / y.length : 0;
  let ss = 0;
  for (let i = 0; i < y.length; i++) ss += (y[i] - mean) * (y[i] - mean);
  return ss;
}

/**
 * One silence block `x[b…e)`: returns the sum of its samples; leaves in `out[0]` the sum of squares about
 * its mean and in `out[1]` 1 when any sample is non-zero, else 0.
 */
function scanBlock(x: Float32Array, b: number, e: number, out: Float64Array): number {
  let sum = 0;
  let nonZero = 0;
  for (let i = b; i < e; i++) {
    sum += x[i];
    if (x[i] !== 0) nonZero = 1;
  }
  const mean = sum / (e - b);
  let ss = 0;
  for (let i = b; i < e; i++) ss += (x[i] - mean) * (x[i] - mean);
  out[0] = ss;
  out[1] = nonZero;
  return sum;
}

/**
 * Seconds of silence (runs from {@link livePass}) inside `[from, to)` seconds.
 *
 * @example silentOverlap([0, 4800], 0, 1, 48000) // 0.1
 */
export function silentOverlap(runs: readonly number[], from: Seconds, to: Seconds, fs: Hertz): Seconds {
  const a = from * fs;
  const b = to * fs;
  let total = 0;
  // First run ending after `a` (runs are sorted and disjoint, so their ends are sorted too).
  let lo = 0;
  let hi = runs.length / 2;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (runs[2 * mid + 1] <= a) lo = mid + 1;
    else hi = mid;
  }
  for (let i = 2 * lo; i < runs.length; i += 2) {
    if (runs[i] >= b) break;
    total += Math.max(0, Math.min(b, runs[i + 1]) - Math.max(a, runs[i]));
  }
  return total / fs;
}

/**
 * The message for a recording with no signal on it: all zeros, or a DC level with nothing on it. Null when
 * the pass found a signal that varies.
 *
 * @param pass - The live pass.
 * @param loudestDbfs - Loudest RMS level of any reading, dBFS (after removing the mean).
 * @example describeNoSignal(dcPass, -Infinity) // 'only a DC level, no signal: every sample sits near +0.2500 of full scale …'
 */
export function describeNoSignal(pass: LivePass, loudestDbfs: number): string | null {
  if (!pass.anySignal) return 'silence: every sample of the recording is 0 (nothing was recorded)';
  const floor = Math.pow(10, SILENCE_DBFS / 20);
  if (!(loudestDbfs >= SILENCE_DBFS) && Math.abs(pass.meanLevel) >= floor) {
    const sign = pass.meanLevel > 0 ? '+' : '−';
    return (
      `only a DC level, no signal: every sample sits near ${sign}${Math.abs(pass.meanLevel).toFixed(4)} of ` +
      'full scale with nothing on it; check that the audio output, not a CV output, is patched to the input'
    );
  }
  return null;
}
