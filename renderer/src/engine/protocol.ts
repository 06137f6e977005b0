/**
 * Messages between the page and the engine worker. Everything is structured-clone data; the run state
 * is the plain JSON of `dsp/calibration/run.ts`.
 *
 * Audio does not travel through these messages: the capture worklet posts its blocks straight to the
 * worker over a MessagePort (`AudioBlockMessage`), and the worker hands each buffer back for reuse.
 */
import type { ScalePairResult } from '../../../dsp/advice/index.ts';
import type { DriftRatePoint, DriftResult } from '../../../dsp/calibration/index.ts';
import type { CalibrateOptions, Calibration } from '../../../dsp/calibration/index.ts';
import type { PitchReading } from '../../../dsp/pitch/index.ts';
import type { RunEvent, RunOptionsInput, RunState } from '../../../dsp/calibration/index.ts';
import type { OscillatorOptions } from '../../../dsp/sim/index.ts';
import type { CaptureDetail } from '../lib/analysis.ts';
import type { WavAnalysisOutcome, WavAnalysisRequest } from './wav-analysis.ts';

/** What the engine is doing with the readings besides showing them. */
export type EngineMode = 'run' | 'scale-pair' | 'drift';

/** Run events the page may send (readings and capture results come from inside the engine). */
export type UserRunEvent = Exclude<
  RunEvent,
  { type: 'reading' } | { type: 'capture-result' } | { type: 'rebase' }
>;

/** A plan as the engine takes it. */
export interface PlanSpec {
  readonly id: string;
  readonly label: string;
  readonly volts: readonly number[];
}

/** Settings of the scale pair check. */
export interface ScalePairConfig {
  /** Lower and higher control voltage, V. */
  readonly voltsLow: number;
  readonly voltsHigh: number;
  /** Allowed |interval error|, cents. */
  readonly toleranceCents: number;
  /** With the simulated oscillator: seconds at each voltage before switching. */
  readonly alternateSeconds: number;
}

/** Page → engine. */
export type ToEngine =
  | { readonly type: 'source-live'; readonly sampleRateHz: number; readonly port: MessagePort }
  | {
      readonly type: 'source-sim';
      readonly sampleRateHz: number;
      readonly options: OscillatorOptions;
      readonly volts: number;
      /** Simulated seconds per second of the clock (1, real time, when absent; `?pace=` in the address). */
      readonly pace?: number;
    }
  | { readonly type: 'source-stop'; readonly reason: string }
  | { readonly type: 'sim-options'; readonly options: OscillatorOptions }
  | { readonly type: 'sim-volts'; readonly volts: number; readonly glideSeconds: number }
  /**
   * The drive is patched into the simulator's control input (renderer/src/drive): the simulator then
   * follows only `sim-volts`, not the run's steps, the scale pair alternation or the drift hold.
   */
  | { readonly type: 'sim-patch'; readonly patched: boolean }
  | { readonly type: 'mode'; readonly mode: EngineMode }
  | { readonly type: 'run-start'; readonly plan: PlanSpec; readonly options?: RunOptionsInput }
  | { readonly type: 'run-restore'; readonly state: RunState }
  | { readonly type: 'run-event'; readonly event: UserRunEvent }
  | { readonly type: 'run-close' }
  /** The Setup's tuning reference, clock correction, fit range and network, for the run's calibration. */
  | { readonly type: 'calibration-setup'; readonly setup: CalibrateOptions }
  | { readonly type: 'scale-pair-config'; readonly config: ScalePairConfig }
  | { readonly type: 'scale-pair-reset' }
  | { readonly type: 'drift-start'; readonly volts: number; readonly windowSeconds: number }
  | { readonly type: 'drift-stop' }
  | {
      /** Analyse a recording with `analyzeRecording` (dsp/recording/recording.ts); the live run is paused, not replaced. */
      readonly type: 'wav-analyze';
      /** The file itself, read in slices by the worker (never copied whole); or its bytes. */
      readonly file?: Blob;
      readonly bytes?: ArrayBuffer;
      readonly fileName: string;
      readonly request: WavAnalysisRequest;
    };

/** The run as the page sees it. */
export interface RunSnapshot {
  readonly state: RunState;
  /** Why the run is paused, in words for the screen (null when it is not paused). */
  readonly pausedReason?: string | null;
  /** True while no input is open: the run waits for it. */
  readonly waitingForInput?: boolean;
  /** Engine detail of each captured step, by step index. */
  readonly details: Readonly<Record<number, CaptureDetail>>;
  /** The run's calibration (`dsp/calibration/pipeline.ts`), made in the worker with the Setup last sent. */
  readonly calibration: Calibration;
  /** Stream time the run moved to each step (the simulator's voltage change), seconds, by step index. */
  readonly stepStartedAt: readonly (number | null)[];
  /** Stream time each step's capture was stored, seconds, by step index. */
  readonly capturedAt: readonly (number | null)[];
}

/** One side of the scale pair check. */
export interface ScalePairSide {
  readonly hz: number;
  /** True while this side's plateau is the one being heard (its pitch updates live). */
  readonly live: boolean;
}

/** The scale pair check as it stands. */
export interface ScalePairView {
  readonly low: ScalePairSide | null;
  readonly high: ScalePairSide | null;
  readonly result: ScalePairResult | null;
  /** 'settling' while a new pitch settles, 'settled' on a plateau, 'no-signal'. */
  readonly status: 'settling' | 'settled' | 'no-signal';
  /**
   * Set when the two pitches are further from the pair's interval than the unexpected-pitch guard
   * allows (a wrong or stale voltage): no instruction is given. Cents, measured and nominal.
   */
  readonly unexpected?: { readonly measuredCents: number; readonly expectedCents: number } | null;
}

/** The drift hold as it stands. */
export interface DriftView {
  readonly volts: number;
  /** Seconds since the hold started and cents against the first second's mean. */
  readonly points: readonly { readonly t: number; readonly cents: number }[];
  readonly result: DriftResult | { readonly kind: 'error'; readonly message: string };
  readonly rates: readonly DriftRatePoint[];
  readonly windowSeconds: number;
}

/** Engine → page. */
export type FromEngine =
  | {
      readonly type: 'tick';
      readonly reading: PitchReading;
      readonly streamSeconds: number;
      /** True while the pitch sits on a plateau (dsp/calibration/plateau.ts with its defaults). */
      readonly settled: boolean;
      /** The simulator's control voltage, V, when the simulator is the source. */
      readonly simVolts: number | null;
      readonly run?: RunSnapshot | null;
      readonly scalePair?: ScalePairView;
    }
  | { readonly type: 'run'; readonly run: RunSnapshot | null }
  | { readonly type: 'drift'; readonly drift: DriftView | null }
  | {
      readonly type: 'source';
      readonly kind: 'none' | 'live' | 'sim';
      readonly sampleRateHz: number | null;
      readonly reason?: string;
      /** The previous source's rate, Hz, when a new source starts at a different rate. */
      readonly previousSampleRateHz?: number;
      /** True when a run in progress was moved onto the new stream clock and paused (the run's `rebase` event). */
      readonly runRebased?: boolean;
    }
  | {
      readonly type: 'stats';
      /** Engine time over audio time in the last interval, percent. */
      readonly loadPercent: number;
      /** Time spent rendering the simulated oscillator over audio time, percent (0 for a device). */
      readonly simLoadPercent: number;
      /** Longest time one block took, ms. */
      readonly maxBlockMs: number;
      readonly sampleRateHz: number;
      /** Audio blocks the worklet had to drop because no buffer was free. */
      readonly droppedBlocks: number;
      /** Longest capture measurement (averageOfSpan) so far, ms. */
      readonly maxCaptureMs: number;
    }
  | { readonly type: 'wav-started'; readonly fileName: string }
  | { readonly type: 'wav-done'; readonly fileName: string; readonly outcome: WavAnalysisOutcome }
  | { readonly type: 'error'; readonly message: string };

/** Worklet → worker over the audio port. */
export interface AudioBlockMessage {
  readonly type: 'audio';
  /** The block's samples (the selected channel only); its buffer is transferred and handed back. */
  readonly buffer: ArrayBuffer;
  readonly frames: number;
  /** Channels the input has (for the channel picker). */
  readonly inputChannels: number;
  /** Blocks dropped since the last message because no buffer was free. */
  readonly dropped: number;
}

/** Worker → worklet over the audio port: a buffer back for reuse. */
export interface RecycleMessage {
  readonly type: 'recycle';
  readonly buffer: ArrayBuffer;
}

/** Page → worklet over its node port. */
export type ToWorklet =
  | { readonly type: 'connect'; readonly port: MessagePort }
  | { readonly type: 'channel'; readonly channel: number };

/** Worklet → page over its node port. */
export type FromWorklet = { readonly type: 'format'; readonly inputChannels: number };
