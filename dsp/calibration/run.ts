/**
 * The calibration run: a pure reducer that walks the user through a plan's reference voltages, finds
 * where the pitch settles, captures each step once and keeps the results.
 *
 * Everything is driven by the readings' `timeSeconds`: there are no clocks and no timers. The state is
 * plain JSON (no Maps, classes, functions or NaN; the one Infinity, a capture's unknown `components.dof`,
 * comes back from JSON's null through {@link restoreInfiniteDof} or {@link deserializeRun}), so
 * `JSON.parse(JSON.stringify(state))` is a working state and a run can resume after a restart.
 * The reducer never throws and never mutates its input; an event that makes no sense in the current
 * phase is ignored and leaves a typed note in `notes`.
 *
 * ## Phases
 * - `apply-voltage`: waiting for the user to apply step `current`'s voltage (no new pitch is settling).
 * - `settling`: a new pitch is settling; `progress` 0…1.
 * - `confirm-pitch`: a pitch settled far from where the fit expects it; see `warning`. The user applies
 *   the right voltage (a new plateau is judged afresh), sends `accept-pitch`, or `redo`.
 * - `capturing`: the capture window is running (`captureSeconds`, or ten periods of a sub-audio pitch,
 *   after settling); `progress` 0…1.
 * - `measuring`: the window is complete; `pendingCapture` asks the host for its precise measurement.
 * - `captured`: step done; the run moves on by itself after `capturedHoldSeconds` of readings.
 * - `paused`, `finished`, `aborted`.
 *
 * ## Hands-free acceptance
 * The expected pitch of step i is `f_ref·2^((V_i − V_ref)·s)`, where ref is the nearest captured step and
 * s the octaves-per-volt slope fitted by least squares to log2(f) over the captured steps (1.0 before
 * there are two): at 1 V/oct a volt is an octave, 1200 cents (docs/facts.md). A settled pitch within
 * the tolerance (`toleranceCents`, at most half the expected interval) is taken; one at the reference
 * step's pitch is ignored (the voltage has not been moved yet); anything else raises a warning, with
 * `likely: 'missed-step'` when it matches the step after next. The first step takes whatever settles.
 */
import { z } from 'zod';
import {
  clonePlateauState,
  createPlateauState,
  DEFAULT_PLATEAU_OPTIONS,
  isUsablePitch,
  openPlateau,
  pushReading,
  resolvePlateauOptions,
  trailingSlope,
  type Plateau,
  type PlateauDetectorState,
  type PlateauOptions,
} from './plateau.ts';
import { fitThermalTail } from './tail.ts';
import { PLAN_LIMITS, validatePlanVolts, type Plan } from './plan.ts';
import {
  combinedCents,
  type PitchReading,
  type StepFlag,
  type UncertaintyComponents,
} from '../pitch/index.ts';
import type { Cents, Hertz, Seconds, Volts } from '../math/index.ts';

/** Settings of a run. */
export interface RunOptions {
  /** Length of the capture window after settling, seconds, in [0.05, 60]. Default 1. */
  captureSeconds: Seconds;
  /** How far from the expected pitch a settled pitch may be and still be taken, cents, in [1, 1200]. Default 150. */
  toleranceCents: Cents;
  /** How long the `captured` phase is shown before moving on, seconds of readings, in [0, 10]. Default 0.5. */
  capturedHoldSeconds: Seconds;
  /** How long to wait for the host's `capture-result` before using the live readings, seconds, in [0.1, 600]. Default 10. */
  hostTimeoutSeconds: Seconds;
  /** Octaves per volt assumed before two steps are captured, in [0.25, 4]. Default 1 (1 V/oct). */
  octavesPerVoltStart: number;
  /**
   * How far the creep still under way may move a capture, cents, in [0.0001, 10]. Default 0.01. A capture
   * closes once the bound on the creep left in its window (an exponential tail fitted to the plateau's
   * readings, dsp/calibration/tail.ts) is within this or half the window's own standard error, or the fit
   * cannot tell the pitch from a steady one; else it slides on until `settleTimeoutSeconds`.
   */
  settleLimitCents: Cents;
  /**
   * The longest thermal tail allowed for, seconds, in [0, 60]. Default 3.5 (thermal tails of τ up to about
   * 3 s). The tail fit tries time constants up to this; with too few readings for it, creep at the current
   * rate is counted as still to come for this long. 0 turns the settling test off.
   */
  creepHorizonSeconds: Seconds;
  /** How long a completed capture window may wait for the creep to die out before it is taken anyway and flagged `still-settling`, seconds, in [0, 600]. Default 4. */
  settleTimeoutSeconds: Seconds;
  /** Plateau detector settings (see `dsp/calibration/plateau.ts`). */
  plateau: PlateauOptions;
}

/** Options accepted by {@link createRun}: any subset. */
export type RunOptionsInput = Partial<Omit<RunOptions, 'plateau'>> & { plateau?: Partial<PlateauOptions> };

/** The defaults of {@link RunOptions} (the plateau defaults are those of `dsp/calibration/plateau.ts`). */
export const DEFAULT_RUN_OPTIONS: Omit<RunOptions, 'plateau'> = Object.freeze({
  captureSeconds: 1,
  toleranceCents: 150,
  capturedHoldSeconds: 0.5,
  hostTimeoutSeconds: 10,
  octavesPerVoltStart: 1,
  settleLimitCents: 0.01,
  creepHorizonSeconds: 3.5,
  settleTimeoutSeconds: 4,
});

/**
 * Fewest cycles of the pitch a capture window holds: below 10 Hz the window grows past `captureSeconds`
 * to ten periods (5 s at 2 Hz), as the live tracker's windows do (dsp/pitch/stream.ts).
 */
export const CAPTURE_MIN_CYCLES = 10;

/**
 * Length of the capture window for a pitch: `captureSeconds`, or {@link CAPTURE_MIN_CYCLES} periods when
 * that is longer (sub-audio pitches).
 *
 * @param options - The run's options (`captureSeconds`).
 * @param hz - The pitch heard or expected, Hz, or null when unknown (then `captureSeconds`).
 * @example captureSecondsFor({ captureSeconds: 1 }, 2) // 5
 */
export function captureSecondsFor(options: Pick<RunOptions, 'captureSeconds'>, hz: Hertz | null): Seconds {
  const cycles = hz !== null && hz > 0 && Number.isFinite(hz) ? CAPTURE_MIN_CYCLES / hz : 0;
  return Math.max(options.captureSeconds, cycles);
}

/** Pitches below this are sub-audio: their steps take several seconds each, Hz. */
export const SUB_AUDIO_HZ: Hertz = 20;

/**
 * About how long a step at a pitch takes from the new voltage to its capture, seconds: a live window of
 * ten periods (the tracker's, dsp/pitch/stream.ts) before the readings show the new pitch, the plateau's
 * `settleSeconds`, then the capture window ({@link captureSecondsFor}). A thermal tail the capture waits on
 * adds to it. In-process engine runs over the demo LFO core took 10.1, 6.0, 3.4 and 2.4 s at 2, 4, 8 and
 * 16 Hz (test/lfo-engine.test.ts).
 *
 * @param options - The run's options (`captureSeconds`, `plateau.settleSeconds`).
 * @param hz - The step's pitch, Hz, > 0.
 * @example stepSecondsAt(resolveRunOptions(), 2) // 10.5
 */
export function stepSecondsAt(
  options: Pick<RunOptions, 'captureSeconds'> & { plateau: Pick<PlateauOptions, 'settleSeconds'> },
  hz: Hertz,
): Seconds {
  if (!(hz > 0) || !Number.isFinite(hz)) throw new RangeError(`hz must be a positive frequency, got ${hz}`);
  return CAPTURE_MIN_CYCLES / hz + options.plateau.settleSeconds + captureSecondsFor(options, hz);
}

/** A move of the pitch this far from a capture window's mean, cents, means the user moved on. */
const CAPTURE_JUMP_CENTS = 20;
/** A window taken when the voltage moved on ends this long before the first sign of the move, seconds (three readings at 20 per second). */
const MOVE_MARGIN_SECONDS = 0.15;
/**
 * Floor of the run's settle band half-width, cents (the detector's own default floor is 0.05): a pitch
 * creeping on a thermal tail at up to about 0.6 cent per second (0.3 cent over the 0.5 s settle) still
 * settles, so a strong tail is captured (the window waiting on the tail fit, flagged `still-settling` on
 * the timeout) rather than missed; at 0.05 a tail of 2 cents per volt with τ = 1.5–3 s never settled
 * within a 3–5 s hold. A voltage step moves the pitch by far more (1 mV is 1.2 cents, docs/facts.md).
 */
const RUN_MIN_HALF_WIDTH_CENTS = 0.15;
/** Trailing span over which the creep's slope is measured, seconds (at least the capture window). */
const CREEP_WINDOW_SECONDS = 2;
/** The remaining creep may move a capture by up to this fraction of the window's own standard error (or `settleLimitCents`). */
const SETTLE_FRACTION = 0.5;

/** Limits of the estimated slope; outside them the start value is used instead, octaves per volt. */
const SLOPE_LIMITS = [0.25, 4] as const;
/** Notes kept in `log`. */
const LOG_LENGTH = 50;

/** How a capture was taken. */
export type CaptureHow = 'first' | 'expected' | 'accepted-anyway' | 'manual';

/** One step's measurement. */
export interface StepCapture {
  /** Measured pitch, Hz. */
  hz: Hertz;
  /** Standard uncertainty of `hz`, cents. */
  uncertaintyCents: Cents;
  /** Capture window, seconds of the reading stream. */
  startSeconds: Seconds;
  endSeconds: Seconds;
  /** `host`: the host's long average; `live-mean`: mean of the live readings in the window (fallback). */
  source: 'host' | 'live-mean';
  /** Live readings that fell in the window. */
  liveCount: number;
  /** How the step was taken. */
  how: CaptureHow;
  /** Pitch the fit expected, Hz (null for the first step or a manual capture with nothing to expect). */
  expectedHz: Hertz | null;
  /** What the capture went through (`spans-break`, `still-settling`); empty when all is well. */
  flags: StepFlag[];
  /** The parts of `uncertaintyCents` (its root-sum-square), cents; `dof` may be Infinity. */
  components: UncertaintyComponents;
}

/** One step of the plan with its result. */
export interface RunStep {
  index: number;
  /** Voltage the plan asks for, V. */
  nominalVolts: Volts;
  /** The user's meter reading at the oscillator input, V (null until entered). */
  measuredVolts: Volts | null;
  /**
   * The voltage a calibrated drive applied for this step, V (dsp/drive: `appliedVoltsAt`), or absent/null
   * when the voltage was set by hand. Used when no meter reading was typed.
   */
  appliedVolts?: Volts | null;
  /** Standard uncertainty of `appliedVolts`, V, from the meter's specification and the drive's fit. */
  appliedVoltsUncertainty?: Volts | null;
  status: 'pending' | 'captured' | 'skipped';
  capture: StepCapture | null;
  /** Earlier captures of this step that a newer one replaced (after `back` or a repeat), oldest first. */
  earlier: StepCapture[];
}

/** A capture window in progress, with running statistics of the live readings in it. */
export interface CaptureWindow {
  stepIndex: number;
  startSeconds: Seconds;
  endSeconds: Seconds;
  how: CaptureHow;
  expectedHz: Hertz | null;
  /** Start of the plateau being captured (null for a manual capture, which follows no plateau). */
  plateauStartSeconds: Seconds | null;
  /** Time the window completed (the host was asked), seconds; null while running. */
  closedAtSeconds: Seconds | null;
  /** Reference of the running mean, Hz. */
  anchorHz: Hertz | null;
  count: number;
  /** Running mean, cents relative to `anchorHz` (Welford). */
  meanCents: Cents;
  /** Running sum of squared deviations, cents² (Welford). */
  m2: number;
  sumSigma: Cents;
  /** When the window first completed, seconds (the settle timeout counts from here); null while running. */
  firstCloseSeconds: Seconds | null;
  /** Latest trailing slope of the pitch, cents per second (null until measured). */
  creepCentsPerSecond: number | null;
  /** Residual creep counted into the capture, standard uncertainty, cents. */
  settlingCents: Cents;
  /** True when the window was taken on the settle timeout with the creep still measurable. */
  timedOut: boolean;
}

/** What the run asks the host to measure: the engine's long average over [startSeconds, endSeconds]. */
export interface PendingCapture {
  stepIndex: number;
  startSeconds: Seconds;
  endSeconds: Seconds;
}

/** A settled pitch that the run did not take by itself. */
export interface PitchWarning {
  kind: 'unexpected-pitch';
  stepIndex: number;
  expectedHz: Hertz;
  heardHz: Hertz;
  /** Heard minus expected, cents. */
  offCents: Cents;
  /** `missed-step`: it matches the step after next; otherwise `wrong-voltage`. */
  likely: 'wrong-voltage' | 'missed-step';
  /** Start of the flagged plateau, seconds (identifies it). */
  plateauStartSeconds: Seconds;
}

/** The run's phases; see the module description. */
export type RunPhase =
  | 'apply-voltage'
  | 'settling'
  | 'confirm-pitch'
  | 'capturing'
  | 'measuring'
  | 'captured'
  | 'paused'
  | 'finished'
  | 'aborted';

/** Why an event was ignored. */
export type IgnoredReason =
  | 'bad-event'
  | 'bad-reading'
  | 'out-of-order-reading'
  | 'run-over'
  | 'paused'
  | 'not-paused'
  | 'no-step-before'
  | 'bad-step-index'
  | 'bad-volts'
  | 'no-pending-capture'
  | 'stale-capture-result'
  | 'no-warning'
  | 'warning-plateau-gone'
  | 'no-readings-yet'
  | 'already-capturing'
  | 'internal-error';

/** A typed note left by an event. */
export type RunNote =
  | { kind: 'ignored'; event: string; reason: IgnoredReason; atSeconds: Seconds | null }
  | {
      kind: 'captured';
      stepIndex: number;
      hz: Hertz;
      source: 'host' | 'live-mean';
      atSeconds: Seconds | null;
    }
  | {
      kind: 'capture-abandoned';
      stepIndex: number;
      reason: 'pitch-moved' | 'signal-lost' | 'paused' | 'navigated' | 'aborted';
      atSeconds: Seconds | null;
    }
  | { kind: 'capture-failed'; stepIndex: number; reason: 'no-live-readings'; atSeconds: Seconds | null }
  | { kind: 'host-result-unusable'; stepIndex: number; atSeconds: Seconds | null }
  | { kind: 'host-timeout'; stepIndex: number; atSeconds: Seconds | null }
  | { kind: 'same-pitch-ignored'; stepIndex: number; heardHz: Hertz; atSeconds: Seconds | null }
  | {
      kind: 'unexpected-pitch';
      stepIndex: number;
      expectedHz: Hertz;
      heardHz: Hertz;
      likely: 'wrong-voltage' | 'missed-step';
      atSeconds: Seconds | null;
    }
  | { kind: 'warning-cleared'; stepIndex: number; atSeconds: Seconds | null }
  | { kind: 'finished'; captured: number; skipped: number; atSeconds: Seconds | null };

/** The whole run: plain JSON. Treat as immutable; {@link runReducer} returns a new one. */
export interface RunState {
  format: 'spanmeter-run';
  version: 1;
  plan: { id: string; label: string; volts: Volts[] };
  options: RunOptions;
  steps: RunStep[];
  /** Index of the step being measured (the last step once finished). */
  current: number;
  phase: RunPhase;
  /** Progress of `settling` or `capturing`, 0…1 (1 in `measuring`, 0 otherwise). */
  progress: number;
  /** Latest pitch heard, Hz (null when the latest reading had none). */
  heardHz: Hertz | null;
  capture: CaptureWindow | null;
  /** Set when the run needs the host's measurement of a completed capture window; null otherwise. */
  pendingCapture: PendingCapture | null;
  warning: PitchWarning | null;
  /** When the latest capture was stored, seconds (drives the `captured` hold). */
  capturedAtSeconds: Seconds | null;
  /** The step captured most recently in time (its plateau is the one the user is probably still on). */
  lastCapturedStep: number | null;
  /** Time of the latest reading, seconds. */
  lastSeconds: Seconds | null;
  /** Plateau detector state. */
  detector: PlateauDetectorState;
  /** Notes left by the latest event. */
  notes: RunNote[];
  /** The latest notes of all events, oldest first (at most 50). */
  log: RunNote[];
}

/** A capture result from the host for a {@link PendingCapture}. */
export type HostMeasurement =
  | {
      kind: 'ok';
      hz: Hertz;
      uncertaintyCents: Cents;
      /** The parts of `uncertaintyCents` (estimator and repeatability), when the host has them. */
      components?: UncertaintyComponents;
      /** What the host found in the window itself (a recording's `still-settling`), carried to the step. */
      flags?: readonly StepFlag[];
      /** Breaks in the signal inside the window (the step is then flagged `spans-break`). */
      breaks?: number;
    }
  | { kind: 'unavailable' };

/** Everything the run responds to. */
export type RunEvent =
  | { type: 'reading'; reading: PitchReading }
  | {
      type: 'capture-result';
      stepIndex: number;
      startSeconds: Seconds;
      endSeconds: Seconds;
      result: HostMeasurement;
    }
  | { type: 'redo'; stepIndex: number }
  | { type: 'skip' }
  | { type: 'back' }
  | { type: 'pause' }
  | { type: 'resume' }
  | { type: 'abort' }
  | { type: 'set-measured-volts'; stepIndex: number; volts: Volts | null }
  | { type: 'set-applied-volts'; stepIndex: number; volts: Volts | null; uncertaintyVolts: Volts | null }
  | { type: 'capture-now' }
  | { type: 'accept-pitch' }
  /**
   * The run moves onto a new stream clock (a restart, a new input device, a restored autosave): whatever
   * depended on the old clock is dropped and a run in progress is paused on its next pending step.
   */
  | { type: 'rebase' };

function checkOption(name: string, v: unknown, lo: number, hi: number): void {
  if (typeof v !== 'number' || !Number.isFinite(v) || v < lo || v > hi) {
    throw new RangeError(`${name} must be a finite number in [${lo}, ${hi}], got ${String(v)}`);
  }
}

/**
 * Fills in and checks run options.
 *
 * @param options - Any subset of {@link RunOptions}.
 * @throws RangeError naming the option, its value and the allowed range.
 * @example resolveRunOptions({ captureSeconds: 2 }).toleranceCents // 150
 */
export function resolveRunOptions(options: RunOptionsInput = {}): RunOptions {
  const { plateau, ...rest } = options;
  const o = { ...DEFAULT_RUN_OPTIONS, ...rest };
  checkOption('captureSeconds', o.captureSeconds, 0.05, 60);
  checkOption('toleranceCents', o.toleranceCents, 1, 1200);
  checkOption('capturedHoldSeconds', o.capturedHoldSeconds, 0, 10);
  checkOption('hostTimeoutSeconds', o.hostTimeoutSeconds, 0.1, 600);
  checkOption('octavesPerVoltStart', o.octavesPerVoltStart, SLOPE_LIMITS[0], SLOPE_LIMITS[1]);
  checkOption('settleLimitCents', o.settleLimitCents, 0.0001, 10);
  checkOption('creepHorizonSeconds', o.creepHorizonSeconds, 0, 60);
  checkOption('settleTimeoutSeconds', o.settleTimeoutSeconds, 0, 600);
  // A pitch still creeping on a thermal tail settles as a plateau and the tail fit decides when to take it
  // (settledEnough), so the run's settle band is as wide as the detector allows unless set.
  const maxHalf = plateau?.maxHalfWidthCents ?? DEFAULT_PLATEAU_OPTIONS.maxHalfWidthCents;
  const minHalf = Math.min(RUN_MIN_HALF_WIDTH_CENTS, maxHalf);
  return { ...o, plateau: { ...resolvePlateauOptions({ minHalfWidthCents: minHalf, ...(plateau ?? {}) }) } };
}

/**
 * Starts a run over a plan.
 *
 * @param plan - A {@link Plan}, or just its voltages (2…64 points in −12…+12 V, none within 0.1 mV of another).
 * @param options - Any subset of {@link RunOptions}.
 * @returns The run, in `apply-voltage` for step 0.
 * @throws RangeError when the plan or an option is invalid (the message names it).
 * @example createRun(presetPlan('octaves-0-4')).steps.map((s) => s.nominalVolts) // [0, 1, 2, 3, 4]
 */
export function createRun(plan: Plan | readonly Volts[], options: RunOptionsInput = {}): RunState {
  const p: Plan = Array.isArray(plan)
    ? { id: 'custom', label: 'Custom', volts: plan as readonly Volts[] }
    : (plan as Plan);
  const checked = validatePlanVolts(p.volts);
  if (checked.kind === 'error') throw new RangeError(`plan: ${checked.message}`);
  const opts = resolveRunOptions(options);
  return {
    format: 'spanmeter-run',
    version: 1,
    plan: { id: String(p.id), label: String(p.label), volts: checked.volts.map((v) => v + 0) },
    options: opts,
    steps: checked.volts.map((v, index) => ({
      index,
      nominalVolts: v + 0,
      measuredVolts: null,
      status: 'pending',
      capture: null,
      earlier: [],
    })),
    current: 0,
    phase: 'apply-voltage',
    progress: 0,
    heardHz: null,
    capture: null,
    pendingCapture: null,
    warning: null,
    capturedAtSeconds: null,
    lastCapturedStep: null,
    lastSeconds: null,
    detector: createPlateauState(),
    notes: [],
    log: [],
  };
}

// ---------------------------------------------------------------------------------------------------
// Helpers on the state

function centsBetween(hz: number, refHz: number): number {
  return 1200 * Math.log2(hz / refHz);
}

function stepVolts(s: RunState, i: number): number {
  const st = s.steps[i];
  return st.measuredVolts ?? st.appliedVolts ?? st.nominalVolts;
}

/** The fitted slope and the steps it came from. */
export interface SlopeEstimate {
  /** Octaves per volt (1 at a perfect 1 V/oct scale). */
  octavesPerVolt: number;
  /** Captured steps used; fewer than 2 means the start value was used. */
  fromSteps: number;
}

/**
 * Octaves per volt from the captured steps: the least-squares slope of log2(f) against volts (measured
 * volts where entered), or `octavesPerVoltStart` with fewer than two steps or a slope outside 0.25…4.
 * At 1 V/oct the slope is 1: one volt is 1200 cents (docs/facts.md).
 *
 * @param state - A run.
 * @param excludeStep - A step to leave out (the one being re-measured), or null.
 * @example estimateOctavesPerVolt(createRun([0, 1])).octavesPerVolt // 1
 */
export function estimateOctavesPerVolt(state: RunState, excludeStep: number | null = null): SlopeEstimate {
  const xs: number[] = [];
  const ys: number[] = [];
  for (const st of state.steps) {
    if (st.capture && st.index !== excludeStep) {
      xs.push(stepVolts(state, st.index));
      ys.push(Math.log2(st.capture.hz));
    }
  }
  const fallback = { octavesPerVolt: state.options.octavesPerVoltStart, fromSteps: xs.length };
  if (xs.length < 2) return fallback;
  const mx = xs.reduce((a, b) => a + b, 0) / xs.length;
  const my = ys.reduce((a, b) => a + b, 0) / ys.length;
  let sxx = 0;
  let sxy = 0;
  for (let i = 0; i < xs.length; i++) {
    sxx += (xs[i] - mx) ** 2;
    sxy += (xs[i] - mx) * (ys[i] - my);
  }
  const slope = sxy / sxx;
  if (!(sxx > 0) || !Number.isFinite(slope) || slope < SLOPE_LIMITS[0] || slope > SLOPE_LIMITS[1])
    return fallback;
  return { octavesPerVolt: slope, fromSteps: xs.length };
}

/** Where the fit so far expects a step's pitch. */
export interface ExpectedPitch {
  expectedHz: Hertz;
  /** The captured step it is reckoned from. */
  refStep: number;
  /** Expected interval from the reference step, cents. */
  intervalCents: Cents;
  octavesPerVolt: number;
  /** Tolerance used for this step: min(toleranceCents, |intervalCents|/2, the narrowed window), cents. */
  toleranceCents: Cents;
  /** Standard deviation of the prediction when the window was narrowed ({@link acceptanceWindow}), cents. */
  predictionSigmaCents?: Cents;
}

/**
 * The pitch the fit so far expects at step `stepIndex`: `f_ref·2^((V_i − V_ref)·s)`, reckoned from the
 * nearest captured step (the lower on a tie), with the slope s from {@link estimateOctavesPerVolt}.
 *
 * @param state - A run.
 * @param stepIndex - Step index, integer in [0, steps).
 * @returns The expectation, or null when no other step has been captured (anything goes).
 * @example
 * // A run over [0, 1] V whose step 0 was captured at 110 Hz, nothing else captured:
 * expectedPitch(run, 1) // { expectedHz: 220, refStep: 0, intervalCents: 1200, octavesPerVolt: 1, toleranceCents: 150 }
 */
export function expectedPitch(state: RunState, stepIndex: number): ExpectedPitch | null {
  if (!Number.isInteger(stepIndex) || stepIndex < 0 || stepIndex >= state.steps.length) return null;
  let ref: RunStep | null = null;
  for (const st of state.steps) {
    if (!st.capture || st.index === stepIndex) continue;
    if (!ref || Math.abs(st.index - stepIndex) < Math.abs(ref.index - stepIndex)) ref = st;
  }
  if (!ref || !ref.capture) return null;
  const { octavesPerVolt } = estimateOctavesPerVolt(state, stepIndex);
  const intervalCents = 1200 * (stepVolts(state, stepIndex) - stepVolts(state, ref.index)) * octavesPerVolt;
  const wide = Math.min(state.options.toleranceCents, Math.abs(intervalCents) / 2);
  const narrow = acceptanceWindow(state, stepIndex);
  if (narrow !== null && narrow.toleranceCents < wide) {
    return {
      expectedHz: narrow.expectedHz,
      refStep: ref.index,
      intervalCents: 1200 * Math.log2(narrow.expectedHz / ref.capture.hz),
      octavesPerVolt,
      toleranceCents: narrow.toleranceCents,
      predictionSigmaCents: narrow.sigmaCents,
    };
  }
  return {
    expectedHz: ref.capture.hz * Math.pow(2, intervalCents / 1200),
    refStep: ref.index,
    intervalCents,
    octavesPerVolt,
    toleranceCents: wide,
  };
}

/** Captured steps (other than the one judged) needed before the acceptance window narrows. */
export const NARROW_AFTER_STEPS = 3;
/** The narrowed window is this many prediction standard deviations… */
export const WINDOW_SIGMAS = 4;
/** …plus this many cents (a 30 mV slip is 36 cents at 1 V/oct, docs/facts.md; the window stays well inside it). */
export const WINDOW_MARGIN_CENTS: Cents = 8;
/** Smallest scatter assumed for live captures, cents: oscillator wander and thermal tails (common practice, no source). */
export const WINDOW_SIGMA_FLOOR_CENTS: Cents = 0.5;

/** Solves the small normal equations (XᵀX)β = Xᵀy by Gauss–Jordan; returns β and (XᵀX)⁻¹, or null when singular. */
function smallLeastSquares(cols: number[][], y: number[]): { beta: number[]; inv: number[][] } | null {
  const p = cols.length;
  const n = y.length;
  const m = cols.map((cj, j) => {
    const row = cols.map((ck) => cj.reduce((a, x, i) => a + x * ck[i], 0));
    const eye = cols.map((_, k) => (k === j ? 1 : 0));
    return [...row, cj.reduce((a, x, i) => a + x * y[i], 0), ...eye];
  });
  const scale = Math.max(...m.map((r, j) => Math.abs(r[j])));
  for (let c = 0; c < p; c++) {
    let piv = c;
    for (let r = c + 1; r < p; r++) if (Math.abs(m[r][c]) > Math.abs(m[piv][c])) piv = r;
    if (!(Math.abs(m[piv][c]) > 1e-12 * scale)) return null;
    [m[c], m[piv]] = [m[piv], m[c]];
    const d = m[c][c];
    for (let k = 0; k < m[c].length; k++) m[c][k] /= d;
    for (let r = 0; r < p; r++) {
      if (r === c) continue;
      const f = m[r][c];
      for (let k = 0; k < m[r].length; k++) m[r][k] -= f * m[c][k];
    }
  }
  void n;
  return { beta: m.map((r) => r[p]), inv: m.map((r) => r.slice(p + 1)) };
}

/** The narrowed acceptance window for a step. */
export interface AcceptanceWindow {
  /** Pitch the captured steps predict, Hz. */
  expectedHz: Hertz;
  /** Standard deviation of that prediction, cents. */
  sigmaCents: Cents;
  /** Half-width of the window, cents: `WINDOW_SIGMAS·σ + WINDOW_MARGIN_CENTS`. */
  toleranceCents: Cents;
}

/**
 * Once {@link NARROW_AFTER_STEPS} other steps are captured, where the next one should land and how far it
 * may stray: an ordinary least-squares fit of `1200·(log2 f − V)` to `a + e·V` (plus a term in −f for
 * high-frequency droop once five steps are in), its prediction at the step's voltage and the prediction's
 * standard deviation `s·√(1 + x₀ᵀ(XᵀX)⁻¹x₀)` with s the residual scatter, floored at
 * {@link WINDOW_SIGMA_FLOOR_CENTS} (the prediction interval of a regression; e.g. Montgomery, Peck & Vining,
 * "Introduction to Linear Regression Analysis", §2.4). The window is a few σ plus a few cents, so a 30 mV
 * slip (36 cents) is caught before it is captured.
 *
 * @param state - A run.
 * @param stepIndex - The step to judge.
 * @returns The window, or null with too few captured steps.
 * @example acceptanceWindow(runWithFourSteps, 4) // { expectedHz: 1043.2…, sigmaCents: 0.5…, toleranceCents: 10.2… }
 */
export function acceptanceWindow(state: RunState, stepIndex: number): AcceptanceWindow | null {
  const v: number[] = [];
  const f: number[] = [];
  for (const st of state.steps) {
    if (!st.capture || st.index === stepIndex) continue;
    v.push(stepVolts(state, st.index));
    f.push(st.capture.hz);
  }
  const n = v.length;
  if (n < NARROW_AFTER_STEPS || new Set(v).size < 2) return null;
  const y = v.map((x, i) => 1200 * (Math.log2(f[i]) - x));
  const v0 = stepVolts(state, stepIndex);
  for (const withHf of n >= 5 ? [true, false] : [false]) {
    const cols = [v.map(() => 1), v.slice(), ...(withHf ? [f.map((x) => -x)] : [])];
    const fit = smallLeastSquares(cols, y);
    if (fit === null) continue;
    const p = cols.length;
    let rss = 0;
    for (let i = 0; i < n; i++) {
      let yi = 0;
      for (let j = 0; j < p; j++) yi += cols[j][i] * fit.beta[j];
      rss += (y[i] - yi) ** 2;
    }
    const s = Math.max(n > p ? Math.sqrt(rss / (n - p)) : 0, WINDOW_SIGMA_FLOOR_CENTS);
    // Predicted pitch at v0 (the droop term depends on the pitch itself: a few fixed-point steps).
    let f0 = Math.pow(2, v0 + (fit.beta[0] + fit.beta[1] * v0) / 1200);
    for (let k = 0; k < 20 && withHf; k++)
      f0 = Math.pow(2, v0 + (fit.beta[0] + fit.beta[1] * v0 - fit.beta[2] * f0) / 1200);
    const x0 = [1, v0, ...(withHf ? [-f0] : [])];
    let lev = 0;
    for (let j = 0; j < p; j++) for (let k = 0; k < p; k++) lev += x0[j] * fit.inv[j][k] * x0[k];
    const sigma = s * Math.sqrt(1 + Math.max(0, lev));
    if (!Number.isFinite(f0) || !(f0 > 0) || !Number.isFinite(sigma)) continue;
    return { expectedHz: f0, sigmaCents: sigma, toleranceCents: WINDOW_SIGMAS * sigma + WINDOW_MARGIN_CENTS };
  }
  return null;
}

/** A captured step, ready for fitting. */
export interface CapturedPoint {
  stepIndex: number;
  nominalVolts: Volts;
  /** Measured volts where entered, else nominal, V. */
  volts: Volts;
  hz: Hertz;
  uncertaintyCents: Cents;
  source: 'host' | 'live-mean';
}

/**
 * The captured steps in plan order, for the error table and the fit.
 *
 * @example runCaptures(createRun([0, 1])) // []
 */
export function runCaptures(state: RunState): CapturedPoint[] {
  const out: CapturedPoint[] = [];
  for (const st of state.steps) {
    if (!st.capture) continue;
    out.push({
      stepIndex: st.index,
      nominalVolts: st.nominalVolts,
      volts: stepVolts(state, st.index),
      hz: st.capture.hz,
      uncertaintyCents: st.capture.uncertaintyCents,
      source: st.capture.source,
    });
  }
  return out;
}

function cloneState(s: RunState): RunState {
  const c: RunState = JSON.parse(JSON.stringify({ ...s, detector: null }));
  c.detector = clonePlateauState(s.detector);
  return restoreInfiniteDof(c);
}

/**
 * Puts back the infinite degrees of freedom that JSON wrote as null in the captures' `components.dof`
 * (after a `JSON.parse(JSON.stringify(state))` copy). Changes the state in place and returns it.
 *
 * @example restoreInfiniteDof(JSON.parse(JSON.stringify(run))).steps[0].capture?.components.dof // Infinity
 */
export function restoreInfiniteDof(s: RunState): RunState {
  const fix = (c: StepCapture | null) => {
    if (c && c.components && (c.components.dof === null || c.components.dof === undefined))
      c.components = { ...c.components, dof: Infinity };
  };
  for (const st of s.steps) {
    fix(st.capture);
    for (const e of st.earlier) fix(e);
  }
  return s;
}

function note(s: RunState, n: RunNote): void {
  s.notes.push(n);
  s.log.push(n);
  if (s.log.length > LOG_LENGTH) s.log.splice(0, s.log.length - LOG_LENGTH);
}

function ignore(s: RunState, event: string, reason: IgnoredReason): RunState {
  note(s, { kind: 'ignored', event, reason, atSeconds: s.lastSeconds });
  return s;
}

const LISTENING: readonly RunPhase[] = ['apply-voltage', 'settling', 'confirm-pitch'];

function dropCapture(
  s: RunState,
  reason: 'pitch-moved' | 'signal-lost' | 'paused' | 'navigated' | 'aborted',
): void {
  if (s.capture)
    note(s, { kind: 'capture-abandoned', stepIndex: s.capture.stepIndex, reason, atSeconds: s.lastSeconds });
  s.capture = null;
  s.pendingCapture = null;
}

/** Pauses or ends the run: any capture in progress is given up. */
function stopListening(s: RunState, phase: 'paused' | 'aborted'): void {
  dropCapture(s, phase);
  s.phase = phase;
  s.progress = 0;
  s.warning = null;
}

function toListening(s: RunState): void {
  s.phase = 'apply-voltage';
  s.progress = 0;
  s.warning = null;
}

/** After the user moves to another step: a paused run stays paused with its warning cleared, any other listens there. */
function listenAtCurrent(s: RunState): void {
  if (s.phase === 'paused') s.warning = null;
  else {
    toListening(s);
    reconsider(s);
  }
}

function nextPending(s: RunState, after: number): number | null {
  for (let i = after + 1; i < s.steps.length; i++) if (s.steps[i].status === 'pending') return i;
  for (let i = 0; i < s.steps.length; i++) if (s.steps[i].status === 'pending') return i;
  return null;
}

/** Moves to the next pending step, or finishes. Keeps `paused`. */
function advance(s: RunState): void {
  const next = nextPending(s, s.current);
  s.capturedAtSeconds = null;
  if (next === null) {
    s.phase = 'finished';
    s.progress = 0;
    s.warning = null;
    s.capture = null;
    s.pendingCapture = null;
    const captured = s.steps.filter((st) => st.status === 'captured').length;
    note(s, { kind: 'finished', captured, skipped: s.steps.length - captured, atSeconds: s.lastSeconds });
    return;
  }
  s.current = next;
  if (s.phase !== 'paused') toListening(s);
}

function startCapture(
  s: RunState,
  stepIndex: number,
  atSeconds: number,
  how: CaptureHow,
  expectedHz: number | null,
  plateauStartSeconds: number | null,
  pitchHz: number | null = expectedHz,
): void {
  s.capture = {
    stepIndex,
    startSeconds: atSeconds,
    endSeconds: atSeconds + captureSecondsFor(s.options, pitchHz),
    how,
    expectedHz,
    plateauStartSeconds,
    closedAtSeconds: null,
    anchorHz: null,
    count: 0,
    meanCents: 0,
    m2: 0,
    sumSigma: 0,
    firstCloseSeconds: null,
    creepCentsPerSecond: null,
    settlingCents: 0,
    timedOut: false,
  };
  s.pendingCapture = null;
  s.warning = null;
  s.phase = 'capturing';
  s.progress = 0;
}

function accumulate(cap: CaptureWindow, hz: number, sigma: number): void {
  if (cap.anchorHz === null) cap.anchorHz = hz;
  const c = centsBetween(hz, cap.anchorHz);
  cap.count++;
  const d = c - cap.meanCents;
  cap.meanCents += d / cap.count;
  cap.m2 += d * (c - cap.meanCents);
  cap.sumSigma += sigma;
}

function storeCapture(s: RunState, rec: StepCapture): void {
  const cap = s.capture;
  if (!cap) return;
  const st = s.steps[cap.stepIndex];
  if (st.capture) st.earlier.push(st.capture);
  st.capture = rec;
  st.status = 'captured';
  s.lastCapturedStep = cap.stepIndex;
  s.capture = null;
  s.pendingCapture = null;
  s.capturedAtSeconds = s.lastSeconds;
  note(s, {
    kind: 'captured',
    stepIndex: cap.stepIndex,
    hz: rec.hz,
    source: rec.source,
    atSeconds: s.lastSeconds,
  });
  s.current = cap.stepIndex;
  s.phase = 'captured';
  s.progress = 1;
  if (s.options.capturedHoldSeconds <= 0) advanceAfterCapture(s);
}

function advanceAfterCapture(s: RunState): void {
  advance(s);
  if (s.phase === 'apply-voltage') reconsider(s);
}

/**
 * Stores the live-readings fallback: mean of the readings in the window, uncertainty the standard error
 * of the mean s/√n (JCGM 100:2008 §4.2.3), or the mean reported uncertainty/√n when n < 2 or s = 0.
 */
function storeLiveMean(s: RunState): void {
  const cap = s.capture;
  if (!cap) return;
  if (cap.count === 0 || cap.anchorHz === null) {
    note(s, {
      kind: 'capture-failed',
      stepIndex: cap.stepIndex,
      reason: 'no-live-readings',
      atSeconds: s.lastSeconds,
    });
    s.capture = null;
    s.pendingCapture = null;
    toListening(s);
    return;
  }
  const sd = cap.count >= 2 ? Math.sqrt(cap.m2 / (cap.count - 1)) : 0;
  const sem = sd > 0 ? sd / Math.sqrt(cap.count) : cap.sumSigma / cap.count / Math.sqrt(cap.count);
  const components: UncertaintyComponents = {
    estimatorCents: sem,
    repeatabilityCents: 0,
    settlingCents: cap.settlingCents,
    dof: sd > 0 ? cap.count - 1 : Infinity,
  };
  storeCapture(s, {
    hz: cap.anchorHz * Math.pow(2, cap.meanCents / 1200),
    uncertaintyCents: rss(components),
    flags: cap.timedOut ? ['still-settling'] : [],
    components,
    startSeconds: cap.startSeconds,
    endSeconds: cap.endSeconds,
    source: 'live-mean',
    liveCount: cap.count,
    how: cap.how,
    expectedHz: cap.expectedHz,
  });
}

/** The combined standard uncertainty, computed as every path computes it (`combinedCents`, dsp/pitch/reading.ts). */
const rss = combinedCents;

/** The host's components, when they are well formed (dof may be Infinity or, from JSON, null). */
function okComponents(v: unknown): UncertaintyComponents | null {
  if (typeof v !== 'object' || v === null) return null;
  const c = v as Record<string, unknown>;
  const fin = (x: unknown) => typeof x === 'number' && Number.isFinite(x) && x >= 0;
  if (!fin(c.estimatorCents) || !fin(c.repeatabilityCents)) return null;
  const dof = typeof c.dof === 'number' && c.dof > 0 ? c.dof : Infinity;
  return {
    estimatorCents: c.estimatorCents as number,
    repeatabilityCents: c.repeatabilityCents as number,
    settlingCents: fin(c.settlingCents) ? (c.settlingCents as number) : 0,
    dof,
  };
}

/**
 * Settling on the slope. Called when the capture window [start, end] has completed at time t: bounds how
 * far the window's mean still lies from the settled pitch, and takes the window once that remaining creep
 * cannot move it by more than `settleLimitCents` or half its own standard error (whichever is larger); or,
 * flagged `still-settling`, when the settle timeout has run out. Either way the bound B enters the step as a
 * rectangular term, settlingCents = B/√3 (JCGM 100:2008 §4.3.7).
 *
 * The bound comes from an exponential tail c∞ + a·exp(−t/τ) fitted to the plateau's readings from its start
 * (where the pitch first held still enough to settle, so no reading of the step's glide enters;
 * {@link fitThermalTail}, dsp/calibration/tail.ts; the exponential settling model, common practice, no
 * source), τ up to `creepHorizonSeconds`. A tail the fit cannot tell from a steady pitch (F-test) does not
 * hold the window, but its bound still enters the uncertainty. With too few readings for the fit, it falls
 * back to the trailing slope b ± u_b (dsp/calibration/plateau.ts, trailingSlope, over the last
 * max(2 s, the capture window)): creep at that rate over H = `creepHorizonSeconds` is counted as still to come,
 * B = (|b| + u_b)·H, and the window is also taken when |b| ≤ 2·u_b (no creep the readings can resolve). For
 * an exponential tail of time constant τ ≤ H the window mean lies b·τ²/T·(e^{T/τ} − 1) from the settled value, inside that B.
 */
function settledEnough(s: RunState, cap: CaptureWindow, t: number): boolean {
  const o = s.options;
  if (cap.firstCloseSeconds === null) cap.firstCloseSeconds = t;
  const from = Math.max(
    cap.plateauStartSeconds ?? cap.startSeconds,
    t - Math.max(CREEP_WINDOW_SECONDS, cap.endSeconds - cap.startSeconds),
  );
  const slope = trailingSlope(s.detector, from, t);
  cap.creepCentsPerSecond = slope ? slope.centsPerSecond : null;
  if (!(o.creepHorizonSeconds > 0)) {
    cap.settlingCents = 0;
    return true;
  }
  const H = o.creepHorizonSeconds;
  const fit =
    cap.plateauStartSeconds !== null && H > 0.05
      ? fitThermalTail(
          s.detector.times,
          s.detector.cents,
          Math.max(cap.plateauStartSeconds, t - s.options.plateau.maxSettleSeconds),
          t,
          cap.startSeconds,
          cap.endSeconds,
          H,
        )
      : null;
  const sem = cap.count >= 2 ? Math.sqrt(cap.m2 / (cap.count - 1) / cap.count) : 0;
  const limit = Math.max(o.settleLimitCents, SETTLE_FRACTION * sem);
  let bound: number;
  let settled: boolean;
  if (fit) {
    bound = fit.residualBoundCents;
    settled = bound <= limit || !fit.resolved;
  } else if (slope) {
    const b = Math.abs(slope.centsPerSecond);
    const ub = slope.standardErrorCentsPerSecond;
    bound = (b + ub) * H;
    settled = bound <= limit || b <= 2 * ub;
  } else {
    cap.settlingCents = 0;
    return true;
  }
  cap.settlingCents = bound / Math.sqrt(3);
  if (settled) return true;
  if (t - cap.firstCloseSeconds >= o.settleTimeoutSeconds - 1e-9) {
    cap.timedOut = true;
    return true;
  }
  return false;
}

/**
 * The first held reading in (fromSeconds, toSeconds] that left the plateau's band (the band of
 * dsp/calibration/plateau.ts: max(minHalfWidth, k·mean σ) + maxHalfWidth about the plateau's mean), or null. Such a
 * reading is the first sign that the voltage is moving on: the live tracker may read the first moments of
 * a glide an octave low, so later readings can fall back into the band while the audio has already left.
 */
function leftBandAt(s: RunState, plateau: Plateau, fromSeconds: number, toSeconds: number): number | null {
  const d = s.detector;
  if (d.anchorHz === null) return null;
  const po = s.options.plateau;
  const band =
    Math.max(po.minHalfWidthCents, po.sigmaMultiple * plateau.meanUncertaintyCents) + po.maxHalfWidthCents;
  const meanCents = 1200 * Math.log2(plateau.meanHz / d.anchorHz);
  for (let i = 0; i < d.times.length; i++) {
    const ti = d.times[i];
    if (ti <= fromSeconds + 1e-9 || ti > toSeconds + 1e-9) continue;
    if (Math.abs(d.cents[i] - meanCents) > band) return ti;
  }
  return null;
}

/**
 * Where the readings with a pitch first stopped coming at their usual rate in (fromSeconds, toSeconds],
 * or null: the time one usual interval after the last regular reading. Readings with no pitch are not
 * held by the detector, so a run of them (the tracker losing the pitch as it jumps, a recording looping
 * back to its start) shows as a gap; the usual interval is the shortest spacing of the held readings.
 */
function readingsStoppedAt(s: RunState, fromSeconds: number, toSeconds: number): number | null {
  const ts = s.detector.times;
  let step = Infinity;
  for (let i = 1; i < ts.length; i++) {
    const d = ts[i] - ts[i - 1];
    if (d > 1e-9 && d < step) step = d;
  }
  if (!Number.isFinite(step)) return null;
  for (let i = 1; i < ts.length; i++) {
    if (ts[i] <= fromSeconds + 1e-9 || ts[i] > toSeconds + 1e-9) continue;
    if (ts[i] - ts[i - 1] > 1.5 * step) return ts[i - 1] + step;
  }
  return null;
}

/**
 * The voltage moved on while a completed window was waiting for the creep to die out (the user, a
 * sequencer or a recording does not wait for the screen): the last full window before the move is taken
 * rather than thrown away. It ends `MOVE_MARGIN_SECONDS` before the first sign of the move since the window
 * first completed (a reading out of the band, {@link leftBandAt}, or readings with no pitch,
 * {@link readingsStoppedAt}; else the plateau's last in-band reading), so no sample of the glide enters it. Its
 * residual creep counts into its uncertainty as on the settle timeout, and it is flagged `still-settling`
 * unless the slope up to its end already met the limit. Returns false (the window is dropped as before)
 * for a manual capture, or when no full window fits between its first completion and the move.
 *
 * @param plateau - The plateau that ended with the move.
 * @param t - The reading that showed the move, seconds.
 */
function closeBeforeMove(s: RunState, cap: CaptureWindow, plateau: Plateau, t: number): boolean {
  if (cap.how === 'manual' || cap.firstCloseSeconds === null) return false;
  const firstClose = cap.firstCloseSeconds;
  const moveAt = Math.min(
    leftBandAt(s, plateau, firstClose, plateau.endSeconds) ?? plateau.endSeconds,
    readingsStoppedAt(s, firstClose, plateau.endSeconds) ?? plateau.endSeconds,
  );
  const end = moveAt - MOVE_MARGIN_SECONDS;
  if (end < firstClose - 1e-9) return false;
  slideWindow(s, cap, end);
  if (cap.count === 0) return false;
  if (!settledEnough(s, cap, end)) cap.timedOut = true;
  cap.closedAtSeconds = t;
  s.pendingCapture = { stepIndex: cap.stepIndex, startSeconds: cap.startSeconds, endSeconds: cap.endSeconds };
  s.phase = 'measuring';
  s.progress = 1;
  return true;
}

/** Moves a completed window on to end at t (same length) and rebuilds its live statistics. */
function slideWindow(s: RunState, cap: CaptureWindow, t: number): void {
  cap.startSeconds = t - (cap.endSeconds - cap.startSeconds);
  cap.endSeconds = t;
  cap.anchorHz = null;
  cap.count = 0;
  cap.meanCents = 0;
  cap.m2 = 0;
  cap.sumSigma = 0;
  const d = s.detector;
  if (d.anchorHz === null) return;
  for (let i = 0; i < d.times.length; i++) {
    if (d.times[i] < cap.startSeconds - 1e-9 || d.times[i] > t + 1e-9) continue;
    accumulate(cap, d.anchorHz * Math.pow(2, d.cents[i] / 1200), d.sigmas[i]);
  }
}

type Verdict =
  | { kind: 'take'; how: CaptureHow; expectedHz: number | null }
  | { kind: 'same-pitch' }
  | { kind: 'warn'; warning: Omit<PitchWarning, 'plateauStartSeconds'> };

function judge(s: RunState, stepIndex: number, heardHz: number): Verdict {
  const exp = expectedPitch(s, stepIndex);
  if (!exp) return { kind: 'take', how: 'first', expectedHz: null };
  const off = centsBetween(heardHz, exp.expectedHz);
  if (Math.abs(off) <= exp.toleranceCents)
    return { kind: 'take', how: 'expected', expectedHz: exp.expectedHz };
  for (const j of [exp.refStep, s.lastCapturedStep]) {
    if (j === null || j === stepIndex) continue;
    const c = s.steps[j]?.capture;
    if (c && Math.abs(centsBetween(heardHz, c.hz)) <= exp.toleranceCents) return { kind: 'same-pitch' };
  }
  let likely: PitchWarning['likely'] = 'wrong-voltage';
  const after = stepIndex + 1;
  if (after < s.steps.length) {
    const refHz = s.steps[exp.refStep].capture?.hz ?? exp.expectedHz;
    const interval = 1200 * (stepVolts(s, after) - stepVolts(s, exp.refStep)) * exp.octavesPerVolt;
    const hop = 1200 * Math.abs(stepVolts(s, after) - stepVolts(s, stepIndex)) * exp.octavesPerVolt;
    const tol = Math.min(s.options.toleranceCents, hop / 2);
    if (Math.abs(centsBetween(heardHz, refHz * Math.pow(2, interval / 1200))) <= tol) likely = 'missed-step';
  }
  return {
    kind: 'warn',
    warning: {
      kind: 'unexpected-pitch',
      stepIndex,
      expectedHz: exp.expectedHz,
      heardHz,
      offCents: off,
      likely,
    },
  };
}

/** Handles a newly settled plateau while listening. */
function onSettled(s: RunState, heardHz: number, plateauStart: number, atSeconds: number): void {
  const v = judge(s, s.current, heardHz);
  if (v.kind === 'take') {
    startCapture(s, s.current, atSeconds, v.how, v.expectedHz, plateauStart, heardHz);
  } else if (v.kind === 'same-pitch') {
    note(s, { kind: 'same-pitch-ignored', stepIndex: s.current, heardHz, atSeconds: s.lastSeconds });
    if (s.phase !== 'confirm-pitch') toListening(s);
  } else {
    s.warning = { ...v.warning, plateauStartSeconds: plateauStart };
    s.phase = 'confirm-pitch';
    s.progress = 0;
    note(s, {
      kind: 'unexpected-pitch',
      stepIndex: s.current,
      expectedHz: v.warning.expectedHz,
      heardHz,
      likely: v.warning.likely,
      atSeconds: s.lastSeconds,
    });
  }
}

/**
 * After navigation: if the pitch already sits where the new step expects it, capture it now. Only a
 * pitch that matches an expectation is taken this way; with nothing to expect (no other step captured)
 * the run waits for a new plateau, so a pitch left over from another step is never taken as this one.
 */
function reconsider(s: RunState): void {
  if (s.phase !== 'apply-voltage' && s.phase !== 'settling') return;
  const p = openPlateau(s.detector);
  if (!p || s.lastSeconds === null) return;
  const v = judge(s, s.current, p.meanHz);
  if (v.kind === 'take' && v.how === 'expected') {
    startCapture(s, s.current, s.lastSeconds, v.how, v.expectedHz, p.startSeconds, p.meanHz);
  }
}

function validReading(r: unknown): r is PitchReading {
  if (typeof r !== 'object' || r === null) return false;
  const x = r as Record<string, unknown>;
  if (typeof x.timeSeconds !== 'number' || !Number.isFinite(x.timeSeconds)) return false;
  return x.kind === 'none' || isUsablePitch(x);
}

function onReading(s: RunState, reading: unknown): RunState {
  if (!validReading(reading)) return ignore(s, 'reading', 'bad-reading');
  const t = reading.timeSeconds + 0; // + 0 turns −0 into 0, as JSON would
  if (s.lastSeconds !== null && t <= s.lastSeconds) return ignore(s, 'reading', 'out-of-order-reading');
  s.lastSeconds = t;
  if (s.phase === 'paused' || s.phase === 'aborted') return s;
  const u = pushReading(s.detector, reading, s.options.plateau);
  s.heardHz = reading.kind === 'ok' ? reading.hz : null;
  if (s.phase === 'finished') return s;

  if (s.phase === 'captured') {
    if (s.capturedAtSeconds !== null && t < s.capturedAtSeconds + s.options.capturedHoldSeconds - 1e-9)
      return s;
    advanceAfterCapture(s);
    const after = s.phase as RunPhase;
    if (after === 'finished' || after === 'capturing') return s;
  }

  if (s.phase === 'capturing' && s.capture) {
    const cap = s.capture;
    // The plateau ending drops the window only when the pitch jumped (the user moved on); a pitch that
    // merely creeps out of the plateau's band is what the slope test below waits out.
    const jumped =
      reading.kind === 'ok' &&
      cap.anchorHz !== null &&
      Math.abs(centsBetween(reading.hz, cap.anchorHz) - cap.meanCents) > CAPTURE_JUMP_CENTS;
    const lost = u.gap || (cap.plateauStartSeconds !== null && u.ended !== null && jumped);
    if (lost) {
      if (!u.gap && u.ended && closeBeforeMove(s, cap, u.ended, t)) return s;
      dropCapture(s, u.gap ? 'signal-lost' : 'pitch-moved');
      toListening(s);
      return s;
    }
    if (reading.kind === 'ok' && t >= cap.startSeconds && t <= cap.endSeconds + 1e-9) {
      accumulate(cap, reading.hz, reading.uncertaintyCents);
    }
    // A reading with no pitch, or one that left the band inside or after the window, may be the start of a
    // move the tracker has not yet shown clearly: the window waits (sliding) until the plateau either
    // holds or ends (then closeBeforeMove takes the window before the move).
    const open = cap.how === 'manual' ? null : openPlateau(s.detector);
    const moving =
      t >= cap.endSeconds - 1e-9 &&
      cap.how !== 'manual' &&
      (reading.kind !== 'ok' || (open !== null && leftBandAt(s, open, cap.startSeconds, t) !== null));
    if (moving || (t >= cap.endSeconds - 1e-9 && cap.how !== 'manual' && !settledEnough(s, cap, t))) {
      // Still creeping: the window slides on with the readings until the creep dies out or time is up.
      slideWindow(s, cap, t);
      s.progress = 1;
      return s;
    }
    if (t >= cap.endSeconds - 1e-9) {
      cap.closedAtSeconds = t;
      s.pendingCapture = {
        stepIndex: cap.stepIndex,
        startSeconds: cap.startSeconds,
        endSeconds: cap.endSeconds,
      };
      s.phase = 'measuring';
      s.progress = 1;
    } else {
      s.progress = Math.max(0, Math.min(1, (t - cap.startSeconds) / (cap.endSeconds - cap.startSeconds)));
    }
    return s;
  }

  if (s.phase === 'measuring' && s.capture) {
    const closed = s.capture.closedAtSeconds ?? t;
    if (t - closed >= s.options.hostTimeoutSeconds) {
      note(s, { kind: 'host-timeout', stepIndex: s.capture.stepIndex, atSeconds: t });
      storeLiveMean(s);
    }
    return s;
  }

  if (LISTENING.includes(s.phase)) {
    if (s.phase === 'confirm-pitch' && s.warning) {
      const gone = u.gap || (u.ended !== null && u.ended.startSeconds === s.warning.plateauStartSeconds);
      if (gone) {
        note(s, { kind: 'warning-cleared', stepIndex: s.warning.stepIndex, atSeconds: t });
        toListening(s);
      }
    }
    if (u.settled) {
      onSettled(s, u.settled.meanHz, u.settled.startSeconds, t);
      if (s.phase === 'capturing' && s.capture && reading.kind === 'ok') {
        accumulate(s.capture, reading.hz, reading.uncertaintyCents);
      }
      return s;
    }
    if (s.phase !== 'confirm-pitch') {
      if (u.status.kind === 'settling' && u.status.progress > 0) {
        s.phase = 'settling';
        s.progress = u.status.progress;
      } else {
        s.phase = 'apply-voltage';
        s.progress = 0;
      }
    }
  }
  return s;
}

function isStepIndex(s: RunState, i: unknown): i is number {
  return typeof i === 'number' && Number.isInteger(i) && i >= 0 && i < s.steps.length;
}

/**
 * The `rebase` event: the open capture window, the plateau detector, the pending warning and the time of
 * the latest reading belonged to the old stream clock and are dropped; captures are kept. A run in
 * progress is paused, and a step left in its `captured` hold moves on to the next pending step (or the
 * run finishes), so nothing is captured until the user resumes. Finished and aborted runs keep their phase.
 */
function rebase(s: RunState): RunState {
  s.detector = createPlateauState();
  s.capture = null;
  s.pendingCapture = null;
  s.warning = null;
  s.capturedAtSeconds = null;
  s.lastSeconds = null;
  s.heardHz = null;
  s.progress = 0;
  if (!isRunOver(s)) {
    s.phase = 'paused';
    if (s.steps[s.current]?.status !== 'pending') {
      const next = nextPending(s, s.current);
      if (next === null) s.phase = 'finished';
      else s.current = next;
    }
  }
  return s;
}

function reduce(s: RunState, e: RunEvent): RunState {
  const type = (e as { type?: unknown }).type;
  if (type === 'reading') return onReading(s, (e as { reading?: unknown }).reading);
  if (typeof type !== 'string') return ignore(s, String(type), 'bad-event');
  if (type === 'rebase') return rebase(s);

  // A run in its `captured` hold finishes moving on before any control event is applied.
  if (s.phase === 'captured' && type !== 'capture-result' && type !== 'set-measured-volts')
    advanceAfterCapture(s);
  const over = isRunOver(s);

  switch (e.type) {
    case 'capture-result': {
      const pc = s.pendingCapture;
      if (s.phase !== 'measuring' || !pc || !s.capture) return ignore(s, type, 'no-pending-capture');
      if (
        e.stepIndex !== pc.stepIndex ||
        e.startSeconds !== pc.startSeconds ||
        e.endSeconds !== pc.endSeconds
      ) {
        return ignore(s, type, 'stale-capture-result');
      }
      const r = e.result as Partial<{ kind: string; hz: unknown; uncertaintyCents: unknown }> | null;
      if (r && r.kind === 'ok') {
        const okHz = typeof r.hz === 'number' && Number.isFinite(r.hz) && r.hz > 0;
        const okU =
          typeof r.uncertaintyCents === 'number' &&
          Number.isFinite(r.uncertaintyCents) &&
          r.uncertaintyCents >= 0;
        if (okHz && okU) {
          const hc = okComponents((r as { components?: unknown }).components);
          const components: UncertaintyComponents = {
            estimatorCents: hc ? hc.estimatorCents : (r.uncertaintyCents as number) + 0,
            repeatabilityCents: hc ? hc.repeatabilityCents : 0,
            // Both bound the same creep (the host's from the samples, when it measures one): the larger counts.
            settlingCents: Math.max(s.capture.settlingCents, hc ? hc.settlingCents : 0),
            dof: hc ? hc.dof : Infinity,
          };
          const breaks = (r as { breaks?: unknown }).breaks;
          const hostFlags = (r as { flags?: unknown }).flags;
          const flags: StepFlag[] = [];
          if (typeof breaks === 'number' && breaks > 0) flags.push('spans-break');
          const hostSettling = Array.isArray(hostFlags) && hostFlags.includes('still-settling');
          if (s.capture.timedOut || hostSettling) flags.push('still-settling');
          storeCapture(s, {
            hz: r.hz as number,
            uncertaintyCents: rss(components),
            flags,
            components,
            startSeconds: pc.startSeconds,
            endSeconds: pc.endSeconds,
            source: 'host',
            liveCount: s.capture.count,
            how: s.capture.how,
            expectedHz: s.capture.expectedHz,
          });
          return s;
        }
        note(s, { kind: 'host-result-unusable', stepIndex: pc.stepIndex, atSeconds: s.lastSeconds });
      } else if (!r || r.kind !== 'unavailable') {
        note(s, { kind: 'host-result-unusable', stepIndex: pc.stepIndex, atSeconds: s.lastSeconds });
      }
      storeLiveMean(s);
      return s;
    }
    case 'redo': {
      if (s.phase === 'aborted') return ignore(s, type, 'run-over');
      if (!isStepIndex(s, e.stepIndex)) return ignore(s, type, 'bad-step-index');
      dropCapture(s, 'navigated');
      const st = s.steps[e.stepIndex];
      st.capture = null;
      st.status = 'pending';
      if (s.lastCapturedStep === e.stepIndex) s.lastCapturedStep = null;
      s.current = e.stepIndex;
      s.capturedAtSeconds = null;
      listenAtCurrent(s);
      return s;
    }
    case 'back': {
      if (s.phase === 'aborted') return ignore(s, type, 'run-over');
      const target = s.phase === 'finished' ? s.steps.length - 1 : s.current - 1;
      if (target < 0) return ignore(s, type, 'no-step-before');
      dropCapture(s, 'navigated');
      s.current = target;
      if (s.steps[target].status === 'skipped') s.steps[target].status = 'pending';
      listenAtCurrent(s);
      return s;
    }
    case 'skip': {
      if (over) return ignore(s, type, 'run-over');
      dropCapture(s, 'navigated');
      const st = s.steps[s.current];
      if (st.status === 'pending') st.status = 'skipped';
      s.warning = null;
      advance(s);
      if (s.phase === 'apply-voltage') reconsider(s);
      return s;
    }
    case 'pause': {
      if (over) return ignore(s, type, 'run-over');
      if (s.phase === 'paused') return ignore(s, type, 'paused');
      stopListening(s, 'paused');
      return s;
    }
    case 'resume': {
      if (s.phase !== 'paused') return ignore(s, type, over ? 'run-over' : 'not-paused');
      s.detector = createPlateauState();
      toListening(s);
      return s;
    }
    case 'abort': {
      if (over) return ignore(s, type, 'run-over');
      stopListening(s, 'aborted');
      return s;
    }
    case 'set-measured-volts': {
      if (s.phase === 'aborted') return ignore(s, type, 'run-over');
      if (!isStepIndex(s, e.stepIndex)) return ignore(s, type, 'bad-step-index');
      const v = e.volts;
      if (
        v !== null &&
        (typeof v !== 'number' || !Number.isFinite(v) || v < PLAN_LIMITS.minVolts || v > PLAN_LIMITS.maxVolts)
      ) {
        return ignore(s, type, 'bad-volts');
      }
      s.steps[e.stepIndex].measuredVolts = v === null ? null : v + 0; // + 0 turns −0 into 0, as JSON would
      return s;
    }
    case 'set-applied-volts': {
      if (s.phase === 'aborted') return ignore(s, type, 'run-over');
      if (!isStepIndex(s, e.stepIndex)) return ignore(s, type, 'bad-step-index');
      const v = e.volts;
      const u = e.uncertaintyVolts;
      const bad = (x: unknown) =>
        x !== null &&
        (typeof x !== 'number' ||
          !Number.isFinite(x) ||
          x < PLAN_LIMITS.minVolts ||
          x > PLAN_LIMITS.maxVolts);
      if (bad(v) || (u !== null && (typeof u !== 'number' || !Number.isFinite(u) || u < 0)))
        return ignore(s, type, 'bad-volts');
      s.steps[e.stepIndex].appliedVolts = v === null ? null : v + 0;
      s.steps[e.stepIndex].appliedVoltsUncertainty = v === null || u === null ? null : u + 0;
      return s;
    }
    case 'capture-now': {
      if (over) return ignore(s, type, 'run-over');
      if (s.phase === 'paused') return ignore(s, type, 'paused');
      if (s.phase === 'capturing' || s.phase === 'measuring') return ignore(s, type, 'already-capturing');
      if (s.lastSeconds === null) return ignore(s, type, 'no-readings-yet');
      const exp = expectedPitch(s, s.current);
      const heard = openPlateau(s.detector)?.meanHz ?? null;
      startCapture(s, s.current, s.lastSeconds, 'manual', exp ? exp.expectedHz : null, null, heard);
      return s;
    }
    case 'accept-pitch': {
      if (over) return ignore(s, type, 'run-over');
      if (s.phase !== 'confirm-pitch' || !s.warning) return ignore(s, type, 'no-warning');
      const p = openPlateau(s.detector);
      if (!p || p.startSeconds !== s.warning.plateauStartSeconds || s.lastSeconds === null) {
        toListening(s);
        return ignore(s, type, 'warning-plateau-gone');
      }
      const w = s.warning;
      startCapture(s, s.current, s.lastSeconds, 'accepted-anyway', w.expectedHz, p.startSeconds, p.meanHz);
      return s;
    }
    default:
      return ignore(s, type, 'bad-event');
  }
}

/**
 * True when the run has ended (finished or aborted): it takes no more captures.
 *
 * @example isRunOver(createRun([0, 1])) // false
 */
export function isRunOver(state: RunState): boolean {
  return state.phase === 'finished' || state.phase === 'aborted';
}

/**
 * True while the run is in progress (any phase but finished and aborted, paused included): the one test of
 * "is the run active" for the engine, the page and the autosave.
 *
 * @example isRunActive(createRun([0, 1])) // true
 */
export function isRunActive(state: RunState | null): state is RunState {
  return state !== null && !isRunOver(state);
}

/**
 * The run's reducer: the state after one event. Pure: `state` is not modified, and the same state and
 * event always give the same result. Never throws; an event that does not apply leaves
 * `{ kind: 'ignored', event, reason }` in `notes`.
 *
 * @param state - Current run.
 * @param event - What happened.
 * @returns The next run.
 * @example runReducer(createRun([0, 1]), { type: 'pause' }).phase // 'paused'
 */
export function runReducer(state: RunState, event: RunEvent): RunState {
  const s = cloneState(state);
  s.notes = [];
  if (typeof event !== 'object' || event === null) return ignore(s, String(event), 'bad-event');
  try {
    return reduce(s, event);
  } catch {
    const safe = cloneState(state);
    safe.notes = [];
    return ignore(safe, String((event as { type?: unknown }).type), 'internal-error');
  }
}

// ---------------------------------------------------------------------------------------------------
// Serialisation

const num = z.number();
const nnum = z.number().nullable();
const howSchema = z.enum(['first', 'expected', 'accepted-anyway', 'manual']);
const sourceSchema = z.enum(['host', 'live-mean']);
const flagSchema = z.enum(['spans-break', 'still-settling', 'suspect-voltage', 'outside-tolerance-unknown']);
const captureSchema = z
  .object({
    hz: num.positive(),
    uncertaintyCents: num.nonnegative(),
    startSeconds: num,
    endSeconds: num,
    source: sourceSchema,
    liveCount: num.int().nonnegative(),
    how: howSchema,
    expectedHz: nnum,
    flags: z.array(flagSchema).optional(),
    components: z
      .object({
        estimatorCents: num.nonnegative(),
        repeatabilityCents: num.nonnegative(),
        settlingCents: num.nonnegative(),
        // JSON writes Infinity as null.
        dof: z.number().positive().nullable(),
      })
      .optional(),
  })
  .transform((c) => ({
    ...c,
    flags: c.flags ?? [],
    components: c.components
      ? { ...c.components, dof: c.components.dof ?? Infinity }
      : { estimatorCents: c.uncertaintyCents, repeatabilityCents: 0, settlingCents: 0, dof: Infinity },
  }));
const plateauOptionsSchema = z.object({
  settleSeconds: num,
  sigmaMultiple: num,
  minHalfWidthCents: num,
  maxHalfWidthCents: num,
  maxGapSeconds: num,
  minReadings: num,
  maxSettleSeconds: num,
  maxMedianReadings: num,
});
const detectorSchema = z.object({
  anchorHz: nnum,
  times: z.array(num),
  cents: z.array(num),
  sigmas: z.array(num),
  lastOkSeconds: nnum,
  lastSeconds: nnum,
  open: z
    .object({
      startSeconds: num,
      endSeconds: num,
      settledAtSeconds: num,
      count: num.int().positive(),
      meanCents: num,
      m2: num.nonnegative(),
      sumSigma: num.nonnegative(),
      recent: z.array(num).min(1),
      outside: num.int().nonnegative(),
      halfWidthCents: num,
      groupSize: num.int().positive(),
    })
    .nullable(),
});
const at = { atSeconds: nnum };
const noteSchema = z.discriminatedUnion('kind', [
  z.object({ kind: z.literal('ignored'), event: z.string(), reason: z.string(), ...at }),
  z.object({ kind: z.literal('captured'), stepIndex: num, hz: num, source: sourceSchema, ...at }),
  z.object({
    kind: z.literal('capture-abandoned'),
    stepIndex: num,
    reason: z.enum(['pitch-moved', 'signal-lost', 'paused', 'navigated', 'aborted']),
    ...at,
  }),
  z.object({
    kind: z.literal('capture-failed'),
    stepIndex: num,
    reason: z.literal('no-live-readings'),
    ...at,
  }),
  z.object({ kind: z.literal('host-result-unusable'), stepIndex: num, ...at }),
  z.object({ kind: z.literal('host-timeout'), stepIndex: num, ...at }),
  z.object({ kind: z.literal('same-pitch-ignored'), stepIndex: num, heardHz: num, ...at }),
  z.object({
    kind: z.literal('unexpected-pitch'),
    stepIndex: num,
    expectedHz: num,
    heardHz: num,
    likely: z.enum(['wrong-voltage', 'missed-step']),
    ...at,
  }),
  z.object({ kind: z.literal('warning-cleared'), stepIndex: num, ...at }),
  z.object({ kind: z.literal('finished'), captured: num, skipped: num, ...at }),
]);
const stateSchema = z.object({
  format: z.literal('spanmeter-run'),
  version: z.literal(1),
  plan: z.object({ id: z.string(), label: z.string(), volts: z.array(num) }),
  options: z.object({
    captureSeconds: num,
    toleranceCents: num,
    capturedHoldSeconds: num,
    hostTimeoutSeconds: num,
    octavesPerVoltStart: num,
    settleLimitCents: num.default(DEFAULT_RUN_OPTIONS.settleLimitCents),
    creepHorizonSeconds: num.default(DEFAULT_RUN_OPTIONS.creepHorizonSeconds),
    settleTimeoutSeconds: num.default(DEFAULT_RUN_OPTIONS.settleTimeoutSeconds),
    plateau: plateauOptionsSchema,
  }),
  steps: z.array(
    z.object({
      index: num.int(),
      nominalVolts: num,
      measuredVolts: nnum,
      appliedVolts: nnum.optional(),
      appliedVoltsUncertainty: nnum.optional(),
      status: z.enum(['pending', 'captured', 'skipped']),
      capture: captureSchema.nullable(),
      earlier: z.array(captureSchema),
    }),
  ),
  current: num.int(),
  phase: z.enum([
    'apply-voltage',
    'settling',
    'confirm-pitch',
    'capturing',
    'measuring',
    'captured',
    'paused',
    'finished',
    'aborted',
  ]),
  progress: num.min(0).max(1),
  heardHz: nnum,
  capture: z
    .object({
      stepIndex: num.int(),
      startSeconds: num,
      endSeconds: num,
      how: howSchema,
      expectedHz: nnum,
      plateauStartSeconds: nnum,
      closedAtSeconds: nnum,
      anchorHz: nnum,
      count: num.int().nonnegative(),
      meanCents: num,
      m2: num.nonnegative(),
      sumSigma: num.nonnegative(),
      firstCloseSeconds: nnum.default(null),
      creepCentsPerSecond: nnum.default(null),
      settlingCents: num.nonnegative().default(0),
      timedOut: z.boolean().default(false),
    })
    .nullable(),
  pendingCapture: z.object({ stepIndex: num.int(), startSeconds: num, endSeconds: num }).nullable(),
  warning: z
    .object({
      kind: z.literal('unexpected-pitch'),
      stepIndex: num.int(),
      expectedHz: num,
      heardHz: num,
      offCents: num,
      likely: z.enum(['wrong-voltage', 'missed-step']),
      plateauStartSeconds: num,
    })
    .nullable(),
  capturedAtSeconds: nnum,
  lastCapturedStep: nnum,
  lastSeconds: nnum,
  detector: detectorSchema,
  notes: z.array(noteSchema),
  log: z.array(noteSchema),
});

/** A saved run that cannot be restored: what is wrong, one line per problem. */
export class RunStateError extends Error {
  constructor(
    message: string,
    /** Each problem found, with its path in the saved state. */
    readonly issues: readonly string[],
  ) {
    super(message);
    this.name = 'RunStateError';
  }
}

/** Result of {@link validateRunState}. */
export type RunStateCheck = { kind: 'ok'; state: RunState } | { kind: 'error'; issues: string[] };

function consistency(s: RunState): string[] {
  const issues: string[] = [];
  const n = s.steps.length;
  const planCheck = validatePlanVolts(s.plan.volts);
  if (planCheck.kind === 'error') issues.push(`plan.volts: ${planCheck.message}`);
  if (n !== s.plan.volts.length) issues.push(`steps: ${n} steps for a plan of ${s.plan.volts.length} points`);
  s.steps.forEach((st, i) => {
    if (st.index !== i) issues.push(`steps.${i}.index: expected ${i}, got ${st.index}`);
    if (st.nominalVolts !== s.plan.volts[i])
      issues.push(`steps.${i}.nominalVolts: does not match plan.volts.${i}`);
    if ((st.status === 'captured') !== (st.capture !== null)) {
      issues.push(
        `steps.${i}: status ${st.status} does not agree with capture ${st.capture === null ? 'null' : 'present'}`,
      );
    }
  });
  if (s.current < 0 || s.current >= n)
    issues.push(`current: ${s.current} is not a step index in [0, ${n - 1}]`);
  const idx = (name: string, v: number | null | undefined) => {
    if (v !== null && v !== undefined && (!Number.isInteger(v) || v < 0 || v >= n))
      issues.push(`${name}: ${v} is not a step index`);
  };
  idx('capture.stepIndex', s.capture?.stepIndex);
  idx('pendingCapture.stepIndex', s.pendingCapture?.stepIndex);
  idx('warning.stepIndex', s.warning?.stepIndex);
  idx('lastCapturedStep', s.lastCapturedStep);
  if ((s.phase === 'capturing' || s.phase === 'measuring') !== (s.capture !== null)) {
    issues.push(
      `capture: phase ${s.phase} does not agree with capture ${s.capture === null ? 'null' : 'present'}`,
    );
  }
  if ((s.phase === 'measuring') !== (s.pendingCapture !== null)) {
    issues.push(`pendingCapture: phase ${s.phase} does not agree with pendingCapture`);
  }
  if ((s.phase === 'confirm-pitch') !== (s.warning !== null)) {
    issues.push(`warning: phase ${s.phase} does not agree with warning`);
  }
  const d = s.detector;
  if (d.times.length !== d.cents.length || d.times.length !== d.sigmas.length) {
    issues.push('detector: times, cents and sigmas differ in length');
  }
  if ((d.times.length > 0 || d.open !== null) && d.anchorHz === null)
    issues.push('detector.anchorHz: missing');
  try {
    resolveRunOptions(s.options);
  } catch (err) {
    issues.push(`options: ${(err as Error).message}`);
  }
  return issues;
}

/**
 * Checks that a value (for example `JSON.parse` of a saved run) is a working run state. Never throws.
 *
 * @param value - Anything.
 * @returns The state (unknown keys dropped), or the list of problems.
 * @example validateRunState({}).kind // 'error'
 */
export function validateRunState(value: unknown): RunStateCheck {
  const r = stateSchema.safeParse(value);
  if (!r.success) {
    return {
      kind: 'error',
      issues: r.error.issues.map((i) => `${i.path.join('.') || '(root)'}: ${i.message}`),
    };
  }
  const s = r.data as RunState;
  const issues = consistency(s);
  return issues.length > 0 ? { kind: 'error', issues } : { kind: 'ok', state: s };
}

/**
 * Writes a run as JSON text.
 *
 * @param state - A run.
 * @example JSON.parse(serializeRun(createRun([0, 1]))).format // 'spanmeter-run'
 */
export function serializeRun(state: RunState): string {
  return JSON.stringify(state);
}

/**
 * Reads a run written by {@link serializeRun} (or any JSON of a run state).
 *
 * @param text - JSON text.
 * @returns A working run state.
 * @throws RunStateError listing every problem when the text is not JSON or not a valid run.
 * @example deserializeRun(serializeRun(createRun([0, 1]))).steps.length // 2
 */
export function deserializeRun(text: string): RunState {
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (err) {
    throw new RunStateError(`saved run is not JSON: ${(err as Error).message}`, ['(root): not JSON']);
  }
  const r = validateRunState(value);
  if (r.kind === 'error') {
    throw new RunStateError(
      `saved run is not valid: ${r.issues.slice(0, 3).join('; ')}${r.issues.length > 3 ? '; …' : ''}`,
      r.issues,
    );
  }
  return r.state;
}
