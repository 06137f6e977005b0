/**
 * A steady DC level on one channel of an audio output, for a DC-coupled interface output patched to
 * the oscillator's 1 V/oct input. Web Audio: a `ConstantSourceNode` whose `offset` moves along
 * `linearRampToValueAtTime` ramps (never a jump) into one input of a `ChannelMergerNode` with discrete
 * channels, so the other channels stay at 0; `AudioContext.setSinkId` picks the device.
 *
 * The same graph runs on an `OfflineAudioContext`, which is how the browser tests read its samples.
 * Every level is clamped to the bounds set from the user's maximum voltage before it is scheduled.
 */
import { clampLevel, planRamp, rampLevelAt, type Ramp } from '../../../dsp/drive/index.ts';

/** Level bounds (sample values) that keep the output within the user's maximum. */
export interface LevelBounds {
  readonly low: number;
  readonly high: number;
}

/** The nearest 32-bit float on the inner side of `x` (towards zero), so a rounded sample never passes a bound. */
function float32Inside(x: number): number {
  const f = Math.fround(x);
  if (Math.abs(f) <= Math.abs(x)) return f;
  const a = new Float32Array([f]);
  const bits = new Uint32Array(a.buffer);
  bits[0] -= 1; // one ulp smaller in magnitude, for either sign
  return a[0];
}

/** Full-scale bounds: what the graph accepts before any calibration narrows them. */
export const FULL_SCALE: LevelBounds = { low: -1, high: 1 };

/** A DC level on one channel of a Web Audio context. */
export class DcOutput {
  readonly context: BaseAudioContext;
  readonly channelIndex: number;
  private readonly source: ConstantSourceNode;
  private readonly merger: ChannelMergerNode;
  private ramp: Ramp = { from: 0, to: 0, startSeconds: 0, seconds: 0.005 };
  private bounds: LevelBounds = { low: 0, high: 0 };
  private stopped = false;

  /**
   * Builds the graph at level 0 (the output at rest).
   *
   * @param context - A realtime or offline context.
   * @param channelIndex - Output channel, 0-based, below `channelCount` (a person sees it from 1).
   * @param channelCount - Channels of the destination to use (≤ its maxChannelCount).
   */
  constructor(context: BaseAudioContext, channelIndex: number, channelCount: number) {
    if (!Number.isInteger(channelCount) || channelCount < 1)
      throw new RangeError(`channelCount must be an integer ≥ 1, got ${channelCount}`);
    if (!Number.isInteger(channelIndex) || channelIndex < 0 || channelIndex >= channelCount)
      throw new RangeError(
        `channelIndex must be an integer in [0, ${channelCount - 1}], got ${channelIndex}`,
      );
    this.context = context;
    this.channelIndex = channelIndex;
    const dest = context.destination;
    if (dest.maxChannelCount >= channelCount) dest.channelCount = channelCount;
    dest.channelCountMode = 'explicit';
    dest.channelInterpretation = 'discrete';
    this.merger = context.createChannelMerger(channelCount);
    this.source = context.createConstantSource();
    this.source.offset.value = 0;
    this.source.connect(this.merger, 0, channelIndex);
    this.merger.connect(dest);
    this.source.start(0);
  }

  /** The level the output holds or is ramping to. */
  get targetLevel(): number {
    return this.ramp.to;
  }

  /** The level at a time on the context's clock. */
  levelAt(seconds: number): number {
    return rampLevelAt(this.ramp, seconds);
  }

  /** Sets the bounds every later level is clamped into (from `levelBounds` in dsp/drive). */
  setBounds(bounds: LevelBounds): void {
    // Samples are 32-bit floats: each bound is rounded inwards, so no sample passes the maximum.
    this.bounds = {
      low: float32Inside(Math.max(FULL_SCALE.low, Math.min(0, bounds.low))),
      high: float32Inside(Math.min(FULL_SCALE.high, Math.max(0, bounds.high))),
    };
  }

  /**
   * Ramps from wherever the output is at `atSeconds` to `level` (clamped) over `rampSeconds`.
   *
   * @returns The ramp scheduled.
   */
  rampAt(level: number, atSeconds: number, rampSeconds: number): Ramp {
    if (this.stopped) return this.ramp;
    const from = this.levelAt(atSeconds);
    const r = planRamp(from, clampLevel(level, this.bounds), atSeconds, rampSeconds);
    const p = this.source.offset;
    p.cancelScheduledValues(atSeconds);
    p.setValueAtTime(r.from, atSeconds);
    p.linearRampToValueAtTime(r.to, atSeconds + r.seconds);
    this.ramp = r;
    return r;
  }

  /** Ramps to `level` starting now. */
  setLevel(level: number, rampSeconds: number): Ramp {
    return this.rampAt(level, this.context.currentTime, rampSeconds);
  }

  /**
   * Back to rest: a ramp to level 0 now, or, with `immediate` (the window is closing), straight to 0
   * with no ramp, since there will be no audio clock left to run one.
   */
  rest(rampSeconds: number, immediate = false): void {
    if (immediate) {
      const p = this.source.offset;
      p.cancelScheduledValues(0);
      p.value = 0;
      this.ramp = { from: 0, to: 0, startSeconds: this.context.currentTime, seconds: 0.005 };
      return;
    }
    this.rampAt(0, this.context.currentTime, rampSeconds);
  }

  /** Stops the source (after `rest`): nothing is scheduled any more. */
  stop(): void {
    if (this.stopped) return;
    this.stopped = true;
    try {
      this.source.offset.cancelScheduledValues(0);
      this.source.offset.value = 0;
      this.source.stop();
      this.source.disconnect();
      this.merger.disconnect();
    } catch {
      // already stopped
    }
  }
}

/** An audio output device as the picker lists it. */
export interface OutputDevice {
  readonly deviceId: string;
  readonly label: string;
}

/** The audio outputs the page can see (labels appear once the page has media permission). */
export async function listOutputs(): Promise<OutputDevice[]> {
  const md = navigator.mediaDevices;
  if (!md?.enumerateDevices) return [];
  try {
    const all = await md.enumerateDevices();
    return all
      .filter((d) => d.kind === 'audiooutput')
      .map((d, i) => ({ deviceId: d.deviceId, label: d.label || `Output ${i + 1}` }));
  } catch {
    return [];
  }
}

/** A realtime DC output on a device, or why it could not open. */
export type OpenDcResult =
  | {
      readonly ok: true;
      readonly output: DcOutput;
      readonly context: AudioContext;
      readonly channelCount: number;
    }
  | { readonly ok: false; readonly message: string };

type SinkContext = AudioContext & { setSinkId?: (id: string) => Promise<void> };

/**
 * Opens a realtime context on the device (`setSinkId`; the default device when `deviceId` is
 * 'default' or empty) with a DC output on channel `channelIndex` (0-based).
 */
export async function openDcOutput(deviceId: string, channelIndex: number): Promise<OpenDcResult> {
  let ctx: SinkContext;
  try {
    ctx = new AudioContext({ latencyHint: 'interactive' });
  } catch (err) {
    return {
      ok: false,
      message: `The audio output could not start (${err instanceof Error ? err.message : String(err)}).`,
    };
  }
  try {
    if (deviceId && deviceId !== 'default') {
      if (typeof ctx.setSinkId !== 'function') {
        void ctx.close();
        return {
          ok: false,
          message: 'This browser cannot choose an audio output device (no AudioContext.setSinkId).',
        };
      }
      await ctx.setSinkId(deviceId);
    }
    const n = Math.max(1, ctx.destination.maxChannelCount);
    if (channelIndex >= n) {
      void ctx.close();
      return {
        ok: false,
        message: `Output channel ${channelIndex + 1} is not on this device (it has ${n}).`,
      };
    }
    const output = new DcOutput(ctx, channelIndex, n);
    if (ctx.state === 'suspended') await ctx.resume().catch(() => undefined);
    return { ok: true, output, context: ctx, channelCount: n };
  } catch (err) {
    void ctx.close().catch(() => undefined);
    return {
      ok: false,
      message: `The audio output device could not be opened (${err instanceof Error ? err.message : String(err)}).`,
    };
  }
}
