/**
 * The streaming form of the pitch engine, for live input: blocks of any size go in as they arrive; readings
 * come out at a fixed rate over a window sized to the frequency, and a long settled average of any recent
 * span can be asked for at any time.
 *
 * Sub-audio pitches (LFO cores; MIDI note 0 is 8.18 Hz) need windows of many seconds: ten cycles of 2 Hz are
 * 5 s, 240 000 samples at 48 kHz. With `lowestHz` below the reach of the full-rate windows
 * (`minCycles / maxWindowSeconds`, 10 Hz by default), the tracker also keeps a decimated copy of the stream
 * (a sample rate of 8 kHz to 16 kHz, whatever the input's) and measures the low pitches on it, so their
 * memory and work are those of a 8 kHz stream: ten cycles of 2 Hz are 40 000 samples there, whatever the
 * input's rate. Audio-range pitches are measured at the full rate exactly as before.
 *
 * Everything is allocated in the constructor (the rings of recent audio and the estimators' buffers); after
 * the first readings at each window size (warm-up), `push` allocates only the reading objects it emits.
 */

import { Decimator, cicTaps } from './decimate.ts';
import { MIN_SAMPLE_RATE_HZ, PitchEstimator, checkSampleRate, type PitchOptions } from './pitch.ts';
import type { PitchReading } from './reading.ts';
import { DOUBLE_ZERO, MAX_BREAKS } from './refine.ts';
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
  /**
   * Lowest pitch the tracker follows, Hz, 0.5 to 20. Default: the reach of the full-rate windows,
   * `minCycles / maxWindowSeconds` (10 Hz with the defaults). Lower, and pitches below that reach are
   * measured on a decimated copy of the stream with windows of `minCycles` periods (5 s for 2 Hz).
   */
  readonly lowestHz?: Hertz;
  /** Decimated audio kept for settled averages of sub-audio pitches, seconds. Default 2.5 × the longest sub-audio window, at least 12. */
  readonly lowHistorySeconds?: Seconds;
}

/** The decimated side of a tracker, for sub-audio pitches. */
interface LowTier {
  /** A CIC decimator (`cicTaps`): its nulls sit on every multiple of the output rate, where aliases come from. */
  readonly dec: Decimator;
  /** The decimator's output for one push (at most one hop of input). */
  readonly decOut: Float32Array;
  readonly rateHz: number;
  readonly ring: Float32Array;
  readonly window: Float32Array;
  readonly live: PitchEstimator;
  readonly settled: PitchEstimator;
  /** Longest sub-audio live window, samples of the decimated stream. */
  readonly maxWindow: number;
  readonly breakScratch: Float64Array;
  writePos: number;
  total: number;
  /** Readings to go before the next try for a sub-audio pitch while the full-rate window hears none. */
  probeIn: number;
}

/**
 * While the full-rate window hears no pitch at all (noise, or a sub-audio tone it cannot call too low),
 * look for a sub-audio pitch every this many readings (once a second at 20 a second): each look costs a
 * window of up to 5 s, and a tone the full-rate window calls too low ('below-range') is looked for at once.
 */
const LOW_PROBE_EVERY = 20;

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
  private hintHz: Hertz = DOUBLE_ZERO;
  // Breaks in the stream (dropped blocks), as stream sample indices, newest last (a small ring).
  private readonly breakAt = new Float64Array(64);
  private breakCount = 0;
  private readonly breakScratch = new Float64Array(MAX_BREAKS);
  /** The reach of the full-rate windows, Hz: `minCycles / maxWindowSeconds`. */
  private readonly fullFloorHz: Hertz;
  private readonly low: LowTier | null = null;
  /** Lowest pitch followed, Hz. */
  readonly lowestHz: Hertz;

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
    this.fullFloorHz = this.minCycles / maxW;
    this.lowestHz =
      options.lowestHz === undefined ? this.fullFloorHz : req('lowestHz', options.lowestHz, 0.5, 20);
    if (this.lowestHz < this.fullFloorHz * (1 - 1e-9)) {
      const factor = Math.max(1, Math.floor(fs / MIN_SAMPLE_RATE_HZ));
      const rateHz = fs / factor;
      const longest = this.minCycles / this.lowestHz;
      const lowHist = req(
        'lowHistorySeconds',
        options.lowHistorySeconds ?? Math.max(12, 2.5 * longest),
        longest,
        600,
      );
      const ring = new Float32Array(Math.round(lowHist * rateHz));
      const { maxHz, ...rest } = pitchOptions;
      const lowOptions = {
        ...rest,
        minHz: this.lowestHz,
        maxHz: Math.min(maxHz ?? Infinity, 0.45 * rateHz),
      };
      const maxWindow = Math.ceil(longest * rateHz);
      const dec = new Decimator(factor, cicTaps(factor));
      this.low = {
        dec,
        decOut: new Float32Array(dec.outputLength(this.hop)),
        rateHz,
        ring,
        window: new Float32Array(ring.length),
        live: new PitchEstimator(maxWindow, rateHz, {
          ...lowOptions,
          maxHarmonics: liveHarmonics,
          segments: 8,
        }),
        settled: new PitchEstimator(ring.length, rateHz, lowOptions),
        maxWindow,
        breakScratch: new Float64Array(MAX_BREAKS),
        writePos: 0,
        total: 0,
        probeIn: 0,
      };
    }
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
      const from = this.writePos;
      this.writePos = copyIntoRing(block, i, k, cc, this.channel, this.ring, this.writePos);
      const low = this.low;
      if (low) {
        // The samples just written to the full-rate ring, in one or two pieces, through the decimator.
        const tail = Math.min(k, this.ring.length - from);
        this.pushLow(low, this.ring.subarray(from, from + tail));
        if (tail < k) this.pushLow(low, this.ring.subarray(0, k - tail));
      }
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

  /**
   * Makes a live reading now over the window the current pitch calls for: `minCycles` periods, on the
   * full-rate stream for pitches within its reach and on the decimated one below it (with `lowestHz`).
   */
  readNow(): PitchReading {
    const low = this.low;
    if (low && this.hintHz > 0 && this.hintHz < this.fullFloorHz) return this.readLow(low);
    const r = this.readFull();
    if (!low || r.kind === 'ok') return r;
    // Nothing at the full rate. A pitch below its reach? Look on the decimated stream at once when the
    // full-rate window says the pitch is too low, and every few readings while it hears nothing else.
    const tooLow = r.reason === 'below-range';
    if (!tooLow && (r.reason === 'silent' || r.reason === 'clipped' || low.probeIn-- > 0)) return r;
    low.probeIn = LOW_PROBE_EVERY;
    const q = this.readLow(low);
    if (q.kind === 'ok') return q;
    return tooLow && q.reason === 'warming-up' ? q : r;
  }

  /** A live reading on the full-rate stream. */
  private readFull(): PitchReading {
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
      // With a sub-audio side, a low pitch from a part-filled window may be a harmonic of a tone below
      // the full-rate reach (a 4 Hz triangle's can read as 14 Hz over 0.8 s): wait for the full window.
      const doubtful = this.low !== null && r.kind === 'ok' && r.hz < 2 * this.fullFloorHz;
      if (r.kind === 'ok' && !doubtful && (n * r.hz) / fs >= 0.9 * this.minCycles) return r;
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

  /** A live reading on the decimated stream, over `minCycles` periods of the pitch heard. */
  private readLow(low: LowTier): PitchReading {
    const rate = low.rateHz;
    const wanted =
      this.hintHz > 0
        ? Math.min(
            low.maxWindow,
            Math.max(
              Math.round((this.minWindow * rate) / this.sampleRateHz),
              Math.round((this.minCycles * rate) / this.hintHz),
            ),
          )
        : low.maxWindow;
    const n = Math.min(wanted, this.lowAvailable(low));
    const t = this.total / this.sampleRateHz;
    if (n < 64) return { kind: 'none', reason: 'warming-up', level: this.live.lastLevel(), timeSeconds: t };
    const r = this.measureIn(low, low.live, low.total - n, n, t, this.hintHz, false);
    const cycles = r.kind === 'ok' ? (n * r.hz) / rate : 0;
    if (n < wanted) {
      // Not yet a full window for the lowest pitch: what there is will do if it holds enough cycles.
      if (r.kind === 'ok' && cycles >= 0.9 * this.minCycles) {
        this.hintHz = r.hz;
        return r;
      }
      if (r.kind === 'none' && r.reason !== 'below-range' && r.reason !== 'no-pitch') return r;
      return { kind: 'none', reason: 'warming-up', level: r.level, timeSeconds: t };
    }
    this.hintHz = r.kind === 'ok' ? r.hz : 0;
    if (r.kind === 'ok' && cycles < 0.9 * this.minCycles && n < low.maxWindow) {
      return { kind: 'none', reason: 'warming-up', level: r.level, timeSeconds: t };
    }
    return r;
  }

  /** Decimates `x` (full-rate samples of the analysed channel) into the sub-audio ring. */
  private pushLow(low: LowTier, x: Float32Array): void {
    const made = low.dec.push(x, low.decOut);
    low.writePos = copyIntoRing(low.decOut, 0, made, 1, 0, low.ring, low.writePos);
    low.total += made;
  }

  /** Decimated samples held that the filter made from the stream alone (none of its start-up). */
  private lowAvailable(low: LowTier): number {
    return Math.max(0, Math.min(low.total - low.dec.startupOutputs, low.ring.length));
  }

  /**
   * Index in the decimated stream nearest to full-rate stream index `i`: output m holds the input around
   * m·D − delay (dsp/pitch/decimate.ts).
   */
  private lowIndexOf(low: LowTier, i: number): number {
    return Math.round((i + low.dec.delayFrames) / low.dec.factor);
  }

  /**
   * A settled average: the last `seconds` of audio measured as one window, with all harmonics. This is
   * what a calibration step captures.
   *
   * @param seconds - Span, seconds, from 0.05 to the history length (the longer sub-audio history with
   * `lowestHz`).
   */
  averageOfLast(seconds: Seconds): PitchReading {
    const fs = this.sampleRateHz;
    const low = this.low;
    const longest = Math.max(this.ring.length / fs, low ? low.ring.length / low.rateHz : 0);
    const n = Math.round(req('seconds', seconds, 0.05, longest) * fs);
    const available = Math.min(this.total, this.ring.length);
    const t = this.total / fs;
    if (this.total < n) {
      return { kind: 'none', reason: 'warming-up', level: this.live.lastLevel(), timeSeconds: t };
    }
    const subAudio = low !== null && this.hintHz > 0 && this.hintHz < this.fullFloorHz;
    if (n <= available && !subAudio) {
      const r = this.measure(this.settled, n, t);
      if (!low || r.kind === 'ok' || (r.reason !== 'below-range' && r.reason !== 'no-pitch')) return r;
    }
    return this.averageOfSpan(t - seconds, t);
  }

  /**
   * A settled average over an absolute span of the stream's time, as a calibration run asks for it.
   * Returns a `warming-up` reading when the span has not fully arrived, and `no-pitch` when it has already
   * left the history. Sub-audio pitches (with `lowestHz`) are measured on the decimated stream, which
   * keeps a longer history.
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
    const low = this.low;
    const fullFits = s >= this.total - this.ring.length && e - s <= this.ring.length;
    const subAudio = low !== null && this.hintHz > 0 && this.hintHz < this.fullFloorHz;
    let r: PitchReading = { kind: 'none', reason: 'no-pitch', level: this.live.lastLevel(), timeSeconds: t };
    if (fullFits && !subAudio) {
      r = this.measureRange(this.settled, s, e - s, t, 0, true);
      if (r.kind === 'ok' || (r.reason !== 'below-range' && r.reason !== 'no-pitch')) return r;
    }
    if (!low) return r;
    const js = this.lowIndexOf(low, s);
    const je = Math.min(this.lowIndexOf(low, e), low.total);
    if (js < low.total - this.lowAvailable(low) || je - js < 64) return r;
    const q = this.measureIn(low, low.settled, js, je - js, t, 0, true);
    return q.kind === 'ok' || !fullFits ? q : r;
  }

  /** Forgets all audio and the frequency hint (after a device change, for example). */
  reset(): void {
    this.writePos = 0;
    this.total = 0;
    this.sinceReading = 0;
    this.hintHz = 0;
    this.breakCount = 0;
    const low = this.low;
    if (low) {
      low.dec.reset();
      low.writePos = 0;
      low.total = 0;
      low.probeIn = 0;
    }
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
    return this.measureIn(null, est, start, n, t, hintHz, settled);
  }

  /**
   * Copies samples [start, start+n) out of the full-rate ring (`low` null) or the decimated one, in that
   * stream's own indices, with the breaks inside moved onto its time base, and measures them: a settled
   * average with its repeatability (dsp/pitch/settled.ts), or one reading.
   */
  private measureIn(
    low: LowTier | null,
    est: PitchEstimator,
    start: number,
    n: number,
    t: Seconds,
    hintHz: Hertz,
    settled: boolean,
  ): PitchReading {
    const ring = low ? low.ring : this.ring;
    const window = low ? low.window : this.window;
    const scratch = low ? low.breakScratch : this.breakScratch;
    const total = low ? low.total : this.total;
    const writePos = low ? low.writePos : this.writePos;
    // Breaks inside the window, as positions from its start.
    let nb = 0;
    const kept = Math.min(this.breakCount, this.breakAt.length);
    for (let q = this.breakCount - kept; q < this.breakCount && nb < MAX_BREAKS; q++) {
      const at = this.breakAt[q % this.breakAt.length];
      const b = low ? this.lowIndexOf(low, at) : at;
      if (b > start && b < start + n) scratch[nb++] = b - start;
    }
    const cap = ring.length;
    // Ring index of stream sample `start`.
    const first = (((writePos - (total - start)) % cap) + cap) % cap;
    const tail = Math.min(n, cap - first);
    window.set(ring.subarray(first, first + tail), 0);
    if (tail < n) window.set(ring.subarray(0, n - tail), tail);
    if (settled) return measureSettled(est, window, 0, n, t, scratch, nb);
    est.setBreaks(scratch, nb);
    return est.estimate(window, 0, n, t, 1, hintHz);
  }
}
