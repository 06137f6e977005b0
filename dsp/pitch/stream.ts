/**
 * The streaming form of the pitch engine, for live input: blocks of any size go in as they arrive; readings
 * come out at a fixed rate over a window sized to the frequency, and a long settled average of any recent
 * span can be asked for at any time.
 *
 * Everything is allocated in the constructor (the ring of recent audio and the estimators' buffers); after
 * the first readings at each window size (warm-up), `push` allocates only the reading objects it emits.
 */

import { PitchEstimator, checkSampleRate, type PitchOptions } from './pitch.ts';
import type { PitchReading } from './reading.ts';
import { MAX_BREAKS } from './refine.ts';
import { measureSettled } from './settled.ts';
import type { Hertz, Seconds } from '../math/index.ts';

/** Options of a {@link PitchTracker}. */
export interface TrackerOptions extends Omit<PitchOptions, 'timeSeconds' | 'hintHz'> {
  /** Sample rate of the incoming blocks, Hz (8 kHz to 384 kHz). */
  readonly sampleRateHz: number;
  /** Readings per second, 1 to 100. Default 20. */
  readonly readingsPerSecond?: number;
  /** Shortest live window, seconds. Default 0.1. */
  readonly minWindowSeconds?: Seconds;
  /** Cycles of the current pitch a live window must hold (sets the window low down). Default 10. */
  readonly minCycles?: number;
  /** Longest live window, seconds. Default 1. */
  readonly maxWindowSeconds?: Seconds;
  /** Audio kept for settled averages, seconds. Default 4. */
  readonly historySeconds?: Seconds;
  /** Channels per frame of the pushed blocks (interleaved). Default 1. */
  readonly channelCount?: number;
  /** Zero-based channel to analyse. Default 0. */
  readonly channel?: number;
  /** Harmonics fitted per live reading (settled averages use up to 64). Default 12. */
  readonly liveHarmonics?: number;
}

function req(name: string, v: number, lo: number, hi: number, integer = false): number {
  if (!Number.isFinite(v) || v < lo || v > hi || (integer && !Number.isInteger(v))) {
    throw new RangeError(`${name} must be ${integer ? 'an integer ' : ''}from ${lo} to ${hi}, got ${v}`);
  }
  return v;
}

/**
 * Copies frames `[from, from + count)` of channel `channel` of an interleaved block (`cc` channels) into
 * `ring` from `writePos`, wrapping at its end; returns the next write position.
 */
function copyIntoRing(
  block: ArrayLike<number>,
  from: number,
  count: number,
  cc: number,
  channel: number,
  ring: Float32Array,
  writePos: number,
): number {
  const cap = ring.length;
  let w = writePos;
  for (let i = from; i < from + count; i++) {
    ring[w] = block[i * cc + channel];
    w = w + 1 === cap ? 0 : w + 1;
  }
  return w;
}

/**
 * Live pitch tracker over a ring buffer of recent audio.
 *
 * @example
 * const t = new PitchTracker({ sampleRateHz: 48000 });
 * t.push(block, (r) => { if (r.kind === 'ok') show(r.hz, r.uncertaintyCents); });
 * const capture = t.averageOfLast(1); // one-second settled average
 */
export class PitchTracker {
  readonly sampleRateHz: number;
  readonly readingsPerSecond: number;
  private readonly ring: Float32Array;
  private readonly window: Float32Array;
  private readonly live: PitchEstimator;
  private readonly settled: PitchEstimator;
  private readonly hop: number;
  private readonly minWindow: number;
  private readonly maxWindow: number;
  private readonly minCycles: number;
  private readonly channelCount: number;
  private readonly channel: number;
  private writePos = 0;
  private total = 0;
  private sinceReading = 0;
  private hintHz: Hertz = 0;
  // Breaks in the stream (dropped blocks), as stream sample indices, newest last (a small ring).
  private readonly breakAt = new Float64Array(64);
  private breakCount = 0;
  private readonly breakScratch = new Float64Array(MAX_BREAKS);

  /** @throws RangeError for options outside their ranges (each message names the option and its range). */
  constructor(options: TrackerOptions) {
    const fs = options.sampleRateHz;
    checkSampleRate(fs);
    this.sampleRateHz = fs;
    this.readingsPerSecond = req('readingsPerSecond', options.readingsPerSecond ?? 20, 1, 100);
    const minW = req('minWindowSeconds', options.minWindowSeconds ?? 0.1, 0.01, 10);
    const maxW = req('maxWindowSeconds', options.maxWindowSeconds ?? 1, minW, 10);
    const hist = req('historySeconds', options.historySeconds ?? 4, maxW, 600);
    this.minCycles = req('minCycles', options.minCycles ?? 10, 3, 1000);
    this.channelCount = req('channelCount', options.channelCount ?? 1, 1, 64, true);
    this.channel = req('channel', options.channel ?? 0, 0, this.channelCount - 1, true);
    const liveHarmonics = req('liveHarmonics', options.liveHarmonics ?? 12, 1, 256, true);
    this.hop = Math.max(1, Math.round(fs / this.readingsPerSecond));
    this.minWindow = Math.round(minW * fs);
    this.maxWindow = Math.round(maxW * fs);
    this.ring = new Float32Array(Math.round(hist * fs));
    this.window = new Float32Array(this.ring.length);
    const { sampleRateHz: _fs, ...pitchOptions } = options;
    this.live = new PitchEstimator(this.maxWindow, fs, {
      ...pitchOptions,
      maxHarmonics: liveHarmonics,
      segments: 8,
    });
    this.settled = new PitchEstimator(this.ring.length, fs, pitchOptions);
  }

  /**
   * Marks a break in the stream at the current position: the next sample pushed does not follow the last
   * one (the capture dropped a block, an interface overran). Windows that span it fit each side with its
   * own phase and say so (`breaks` on the reading). Allocation-free, never throws.
   */
  markBreak(): void {
    if (this.total === 0) return;
    const cap = this.breakAt.length;
    if (this.breakCount > 0 && this.breakAt[(this.breakCount - 1) % cap] === this.total) return;
    this.breakAt[this.breakCount % cap] = this.total;
    this.breakCount++;
  }

  /** Seconds of audio received so far (of the analysed channel). */
  get elapsedSeconds(): Seconds {
    return this.total / this.sampleRateHz;
  }

  /**
   * Feeds one block of interleaved samples. Emits a reading every 1/readingsPerSecond seconds of audio
   * through `onReading`. Never throws on the sample values (NaN and infinities are caught per window).
   *
   * @param block - Interleaved samples, `channelCount` per frame; a partial trailing frame is ignored.
   * @param onReading - Receives each reading as it is made.
   * @returns The number of readings emitted.
   */
  push(block: ArrayLike<number>, onReading?: (reading: PitchReading) => void): number {
    const cc = this.channelCount;
    const frames = Math.floor(block.length / cc);
    let emitted = 0;
    // Copy up to the next reading at a time, then read: the same samples land in the same places as one
    // at a time would, and each reading sees the same history.
    for (let i = 0; i < frames;) {
      const k = Math.min(frames - i, this.hop - this.sinceReading);
      this.writePos = copyIntoRing(block, i, k, cc, this.channel, this.ring, this.writePos);
      this.total += k;
      this.sinceReading += k;
      i += k;
      if (this.sinceReading >= this.hop) {
        this.sinceReading = 0;
        const r = this.readNow();
        emitted++;
        if (onReading) onReading(r);
      }
    }
    return emitted;
  }

  /** Makes a live reading now over the window the current pitch calls for. */
  readNow(): PitchReading {
    const fs = this.sampleRateHz;
    const wanted =
      this.hintHz > 0
        ? Math.min(this.maxWindow, Math.max(this.minWindow, Math.round((this.minCycles * fs) / this.hintHz)))
        : this.maxWindow;
    const available = Math.min(this.total, this.ring.length);
    const n = Math.min(wanted, available);
    // Stamped with the moment the reading is made (the end of its window): stamps then rise evenly
    // whatever the window length; the window's centre is timeSeconds − windowSeconds/2.
    const t = this.total / fs;
    if (n < wanted && n < this.maxWindow) {
      // Not yet a full window for the lowest pitch we might be hearing: try what there is, and say
      // 'warming-up' rather than 'below-range' if it is not enough.
      const r = this.measure(this.live, n, t);
      if (r.kind === 'ok' && (n * r.hz) / fs >= 0.9 * this.minCycles) return r;
      if (r.kind === 'none' && r.reason !== 'below-range' && r.reason !== 'no-pitch') return r;
      return { kind: 'none', reason: 'warming-up', level: r.level, timeSeconds: t };
    }
    const r = this.measure(this.live, n, t);
    this.hintHz = r.kind === 'ok' ? r.hz : 0;
    if (r.kind === 'ok' && (n * r.hz) / fs < 0.9 * this.minCycles && n < this.maxWindow) {
      // The window the hint chose turned out too short for the pitch heard: measure again next time with
      // a window sized to it, and do not show this one.
      return { kind: 'none', reason: 'warming-up', level: r.level, timeSeconds: t };
    }
    return r;
  }

  /**
   * A settled average: the last `seconds` of audio measured as one window, with all harmonics. This is
   * what a calibration step captures.
   *
   * @param seconds - Span, seconds, from 0.05 to the history length.
   */
  averageOfLast(seconds: Seconds): PitchReading {
    const n = Math.round(
      req('seconds', seconds, 0.05, this.ring.length / this.sampleRateHz) * this.sampleRateHz,
    );
    const available = Math.min(this.total, this.ring.length);
    const t = this.total / this.sampleRateHz;
    if (available < n) {
      return { kind: 'none', reason: 'warming-up', level: this.live.lastLevel(), timeSeconds: t };
    }
    return this.measure(this.settled, n, t);
  }

  /**
   * A settled average over an absolute span of the stream's time, as a calibration run asks for it.
   * Returns a `warming-up` reading when the span has not fully arrived, and `no-pitch` when it has already
   * left the history.
   *
   * @param startSeconds - Span start, seconds since the first sample.
   * @param endSeconds - Span end, seconds, > startSeconds.
   */
  averageOfSpan(startSeconds: Seconds, endSeconds: Seconds): PitchReading {
    if (!(endSeconds > startSeconds)) {
      throw new RangeError(
        `endSeconds must be greater than startSeconds, got ${startSeconds} and ${endSeconds}`,
      );
    }
    const fs = this.sampleRateHz;
    const s = Math.max(0, Math.round(startSeconds * fs));
    const e = Math.round(endSeconds * fs);
    const t = e / fs;
    if (e > this.total)
      return { kind: 'none', reason: 'warming-up', level: this.live.lastLevel(), timeSeconds: t };
    if (s < this.total - this.ring.length || e - s > this.ring.length) {
      return { kind: 'none', reason: 'no-pitch', level: this.live.lastLevel(), timeSeconds: t };
    }
    return this.measureRange(this.settled, s, e - s, t, 0, true);
  }

  /** Forgets all audio and the frequency hint (after a device change, for example). */
  reset(): void {
    this.writePos = 0;
    this.total = 0;
    this.sinceReading = 0;
    this.hintHz = 0;
    this.breakCount = 0;
  }

  private measure(est: PitchEstimator, n: number, t: Seconds): PitchReading {
    return this.measureRange(est, this.total - n, n, t);
  }

  /** Copies samples [start, start+n) of the stream out of the ring and measures them. */
  private measureRange(
    est: PitchEstimator,
    start: number,
    n: number,
    t: Seconds,
    hintHz = est === this.live ? this.hintHz : 0,
    settled = false,
  ): PitchReading {
    // Breaks inside the window, as positions from its start.
    let nb = 0;
    const kept = Math.min(this.breakCount, this.breakAt.length);
    for (let q = this.breakCount - kept; q < this.breakCount && nb < MAX_BREAKS; q++) {
      const b = this.breakAt[q % this.breakAt.length];
      if (b > start && b < start + n) this.breakScratch[nb++] = b - start;
    }
    const cap = this.ring.length;
    // Ring index of stream sample `start`.
    const first = (((this.writePos - (this.total - start)) % cap) + cap) % cap;
    const tail = Math.min(n, cap - first);
    this.window.set(this.ring.subarray(first, first + tail), 0);
    if (tail < n) this.window.set(this.ring.subarray(0, n - tail), tail);
    // A settled average carries the oscillator's repeatability from sub-windows (dsp/pitch/settled.ts).
    if (settled) return measureSettled(est, this.window, 0, n, t, this.breakScratch, nb);
    est.setBreaks(this.breakScratch, nb);
    return est.estimate(this.window, 0, n, t, 1, hintHz);
  }
}
