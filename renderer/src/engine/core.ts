/**
 * The engine: everything that touches audio or runs the signal processing, for the worker to host.
 * It owns the pitch tracker (`dsp/pitch/stream.ts`), the simulated oscillator (`dsp/sim/simulate.ts`), the
 * calibration run (`dsp/calibration/run.ts`, whose plateau detection is signal processing too), the scale pair
 * check and the drift hold. It has no worker globals: the worker passes a `post` function and feeds it
 * audio, so tests drive it directly in Node.
 *
 * Buffers for audio are allocated when a source starts; per block, the engine allocates only the
 * readings and messages it emits.
 */
import { analyzeDrift, driftRateSeries } from '../../../dsp/calibration/index.ts';
import { DriftBinner } from '../../../dsp/calibration/index.ts';
import { createPlateauDetector, type PlateauDetector } from '../../../dsp/calibration/index.ts';
import type { PitchReading } from '../../../dsp/pitch/index.ts';
import {
  checkPairing,
  EMPTY_PAIRING,
  pairPlateau,
  type ScalePairPairing,
  type ScalePairSideState,
} from '../../../dsp/calibration/index.ts';
import { createRun, isRunActive, runReducer, type RunState } from '../../../dsp/calibration/index.ts';
import {
  createOscillatorStream,
  type OscillatorOptions,
  type OscillatorStream,
} from '../../../dsp/sim/index.ts';
import { PitchTracker } from '../../../dsp/pitch/index.ts';
import { captureDetail, type CaptureDetail } from '../lib/analysis.ts';
import type {
  DriftView,
  EngineMode,
  FromEngine,
  RunSnapshot,
  ToEngine,
  ScalePairConfig,
  ScalePairView,
} from './protocol.ts';
import { feedReading, RunCalibrator } from './run-host.ts';
import {
  analyzeWavBytes,
  analyzeWavSource,
  sliceByteSource,
  type WavAnalysisRequest,
} from './wav-analysis.ts';

/** How the engine talks back and tells time. */
export interface EngineHost {
  post(message: FromEngine, transfer?: Transferable[]): void;
  /** Milliseconds, monotonic (performance.now). */
  nowMs(): number;
  /** Bytes `[start, end)` of a file, read synchronously (the worker's FileReaderSync); absent in tests. */
  readBlob?(blob: Blob, start: number, end: number): Uint8Array;
}

/** Glide of the simulator's control voltage, as if the user turned the reference. */
interface Glide {
  from: number;
  to: number;
  t0: number;
  seconds: number;
}

/** Default glide when the app moves the simulator to a step's voltage, seconds. */
export const SIM_GLIDE_SECONDS = 0.15;

const SIM_CHUNK = 1024;

/**
 * Lowest pitch the live path measures, Hz: LFO-range cores (MIDI note 0 is 8.18 Hz). Pitches below the
 * tracker's full-rate reach (10 Hz) are read on its decimated stream over ten cycles (dsp/pitch/stream.ts).
 */
export const LIVE_LOWEST_HZ = 2;
/** The scale pair's unexpected-pitch guard, cents (dsp/calibration/scale-pair.ts). */
export { PAIR_GUARD_CENTS } from '../../../dsp/calibration/index.ts';

interface ScalePairState {
  config: ScalePairConfig;
  detector: PlateauDetector;
  pairing: ScalePairPairing;
  liveStart: number | null;
  /** When the pair was opened or set up, stream seconds: readings before it are not used. */
  enteredAt: number;
  /** Simulator: when the voltage last switched, stream seconds, and which side it is on. */
  switchedAt: number;
  onHigh: boolean;
}

interface DriftState {
  volts: number;
  windowSeconds: number;
  bins: DriftBinner;
  /** Settling of the held voltage, fed only with readings taken after the hold was asked for. */
  detector: PlateauDetector;
}

/** The pause reason shown when the user paused the run. */
const PAUSED_BY_USER = 'Paused by you. Resume to go on.';

export class EngineCore {
  private readonly host: EngineHost;
  private tracker: PitchTracker | null = null;
  private sourceKind: 'none' | 'live' | 'sim' = 'none';
  private sampleRateHz = 0;
  // Simulator.
  private sim: OscillatorStream | null = null;
  private simOptions: OscillatorOptions = {};
  private simBlock = new Float32Array(SIM_CHUNK);
  private simCv = new Float64Array(SIM_CHUNK);
  private simSamples = 0;
  private simOwed = 0;
  private glide: Glide = { from: 0, to: 0, t0: 0, seconds: 0 };
  private manualVolts = 0;
  /** True while the drive is patched into the simulator's control input (`sim-patch`). */
  private patched = false;
  // Run.
  private run: RunState | null = null;
  private details: Record<number, CaptureDetail> = {};
  private readonly calibrator = new RunCalibrator();
  private stepStartedAt: (number | null)[] = [];
  private capturedAt: (number | null)[] = [];
  private lastCurrent = -1;
  private runDirty = false;
  /** Why the run is paused, in words for the screen (null unless paused). */
  private pausedReason: string | null = null;
  /** Always-on plateau detector for the live readout's settled indicator. */
  private readonly liveDetector: PlateauDetector = createPlateauDetector();
  // Modes.
  private mode: EngineMode = 'run';
  private scalePair: ScalePairState | null = null;
  private drift: DriftState | null = null;
  // Statistics.
  private busyMs = 0;
  private simBusyMs = 0;
  private statAudioSeconds = 0;
  private maxBlockMs = 0;
  private maxCaptureMs = 0;
  private dropped = 0;

  constructor(host: EngineHost) {
    this.host = host;
  }

  /** Seconds of audio the tracker has received. */
  get streamSeconds(): number {
    return this.tracker ? this.tracker.elapsedSeconds : 0;
  }

  /** The run, for tests. */
  get runState(): RunState | null {
    return this.run;
  }

  /** The simulator's control voltage now, V, or null without the simulator. */
  get simVolts(): number | null {
    return this.sim ? this.cvAt(this.streamSeconds) : null;
  }

  /** Handles one message from the page. Never throws: failures are posted as `error` messages. */
  handle(msg: ToEngine): void {
    try {
      this.dispatch(msg);
    } catch (err) {
      this.host.post({ type: 'error', message: err instanceof Error ? err.message : String(err) });
    }
  }

  private dispatch(msg: ToEngine): void {
    switch (msg.type) {
      case 'source-live':
        this.startSource('live', msg.sampleRateHz);
        return;
      case 'source-sim':
        this.simOptions = { ...msg.options, sampleRateHz: msg.sampleRateHz };
        this.sim = createOscillatorStream(this.simOptions);
        this.simSamples = 0;
        this.simOwed = 0;
        this.manualVolts = msg.volts;
        {
          // A run in progress keeps the simulator on its current step's voltage across a restart of the
          // source (a new sample rate, say); otherwise the page's control voltage applies.
          const r = this.run;
          const active = this.mode === 'run' && !this.patched && isRunActive(r);
          const v = active ? r.steps[r.current].nominalVolts : msg.volts;
          this.glide = { from: v, to: v, t0: 0, seconds: 0 };
        }
        this.startSource('sim', msg.sampleRateHz);
        return;
      case 'source-stop':
        this.stopSource(msg.reason);
        return;
      case 'sim-options': {
        if (!this.sim) return;
        const elapsed = this.sim.secondsSincePowerOn;
        this.simOptions = { ...msg.options, sampleRateHz: this.sampleRateHz, warmupElapsedSeconds: elapsed };
        this.sim = createOscillatorStream(this.simOptions);
        return;
      }
      case 'sim-patch':
        this.patched = msg.patched;
        return;
      case 'sim-volts':
        this.manualVolts = msg.volts;
        this.glideTo(msg.volts, msg.glideSeconds);
        return;
      case 'mode':
        this.setMode(msg.mode);
        return;
      case 'run-start':
        this.run = createRun({ id: msg.plan.id, label: msg.plan.label, volts: msg.plan.volts }, msg.options);
        this.pausedReason = null;
        this.resetRunSide(msg.plan.volts.length);
        this.setMode('run');
        this.afterRunChange();
        this.postRun();
        return;
      case 'run-restore':
        this.run = runReducer(msg.state, { type: 'rebase' });
        this.pausedReason =
          this.run.phase === 'paused' ? 'Restored from the autosave, paused. Resume to go on.' : null;
        this.resetRunSide(this.run.steps.length);
        this.afterRunChange();
        this.postRun();
        return;
      case 'run-event':
        if (!this.run) return;
        this.run = runReducer(this.run, msg.event);
        if (msg.event.type === 'pause' && this.run.phase === 'paused') this.pausedReason = PAUSED_BY_USER;
        this.afterRunChange();
        this.postRun();
        return;
      case 'run-close':
        this.run = null;
        this.postRun();
        return;
      case 'calibration-setup':
        this.calibrator.setup = msg.setup;
        if (this.run) this.postRun();
        return;
      case 'scale-pair-config':
        this.scalePair = {
          config: msg.config,
          detector: createPlateauDetector(),
          pairing: EMPTY_PAIRING,
          liveStart: null,
          enteredAt: this.streamSeconds,
          switchedAt: this.streamSeconds,
          onHigh: false,
        };
        if (this.mode === 'scale-pair') this.autoGlide(msg.config.voltsLow);
        return;
      case 'scale-pair-reset':
        if (this.scalePair) {
          this.scalePair.detector.reset();
          this.scalePair.pairing = EMPTY_PAIRING;
          this.scalePair.enteredAt = this.streamSeconds;
        }
        return;
      case 'drift-start':
        this.drift = {
          volts: msg.volts,
          windowSeconds: msg.windowSeconds,
          bins: new DriftBinner(),
          detector: createPlateauDetector(),
        };
        this.setMode('drift');
        this.autoGlide(msg.volts);
        this.postDrift();
        return;
      case 'drift-stop':
        this.drift = null;
        this.postDrift();
        return;
      case 'wav-analyze':
        this.analyzeWav(msg, msg.fileName, msg.request);
        return;
    }
  }

  private startSource(kind: 'live' | 'sim', sampleRateHz: number): void {
    const previousRate = this.sampleRateHz;
    // The glide is timed on the stream clock, which restarts with the new tracker: settle it on its
    // target, or the simulator would replay the old voltage until the new clock caught up with the old.
    this.glide = { from: this.glide.to, to: this.glide.to, t0: 0, seconds: 0 };
    this.tracker = new PitchTracker({ sampleRateHz, lowestHz: LIVE_LOWEST_HZ });
    this.sampleRateHz = sampleRateHz;
    this.sourceKind = kind;
    if (kind === 'live') this.sim = null;
    this.busyMs = 0;
    this.statAudioSeconds = 0;
    this.maxBlockMs = 0;
    this.dropped = 0;
    let runRebased = false;
    if (this.run) {
      // A new stream clock (and perhaps a new rate): the run keeps its captures and waits, paused, for
      // the user. A run that has captured nothing yet (started before the input opened, say) has nothing
      // to protect: it goes on listening on the new stream, unless the user paused it.
      const was = this.run.phase;
      const captured = this.run.steps.some((st) => st.capture !== null);
      const userPaused = was === 'paused' && this.pausedReason === PAUSED_BY_USER;
      runRebased = was !== 'finished' && was !== 'aborted' && (captured || userPaused);
      this.run = runReducer(this.run, { type: 'rebase' });
      if (!runRebased && this.run.phase === 'paused') {
        this.run = runReducer(this.run, { type: 'resume' });
        this.pausedReason = null;
      } else if (runRebased && !userPaused) {
        this.pausedReason =
          previousRate > 0 && previousRate !== sampleRateHz
            ? `The sample rate changed (${previousRate} Hz to ${sampleRateHz} Hz); the captured steps are kept. Resume to go on.`
            : 'The input restarted; the captured steps are kept. Resume to go on.';
      }
      if (was !== this.run.phase || this.run.lastSeconds === null) this.postRun();
      this.stepStartedAt = this.stepStartedAt.map(() => null);
    }
    if (this.scalePair) this.scalePair.detector.reset();
    this.liveDetector.reset();
    this.host.post({
      type: 'source',
      kind,
      sampleRateHz,
      ...(previousRate > 0 && previousRate !== sampleRateHz ? { previousSampleRateHz: previousRate } : {}),
      ...(runRebased ? { runRebased } : {}),
    });
  }

  private stopSource(reason: string): void {
    this.tracker = null;
    this.sim = null;
    this.sourceKind = 'none';
    if (isRunActive(this.run)) {
      if (this.run.phase !== 'paused' || this.pausedReason !== PAUSED_BY_USER)
        this.pausedReason = `The input stopped (${reason}); the captured steps are kept. Resume once it is back.`;
      this.run = runReducer(this.run, { type: 'rebase' });
      this.postRun();
    }
    this.host.post({ type: 'source', kind: 'none', sampleRateHz: null, reason });
  }

  private resetRunSide(steps: number): void {
    this.details = {};
    this.stepStartedAt = new Array(steps).fill(null);
    this.capturedAt = new Array(steps).fill(null);
    this.lastCurrent = -1;
  }

  private setMode(mode: EngineMode): void {
    if (mode === this.mode) return;
    if (this.mode === 'run' && this.run) {
      if (isRunActive(this.run) && this.run.phase !== 'paused') {
        this.run = runReducer(this.run, { type: 'pause' });
        this.pausedReason = `Paused while the ${mode === 'drift' ? 'drift check' : 'scale pair check'} runs. Resume to go on.`;
        this.postRun();
      }
    }
    this.mode = mode;
    if (mode === 'scale-pair' && this.scalePair) {
      // A fresh start: nothing heard before the pair was opened (the run's last step, say) counts.
      this.scalePair.detector.reset();
      this.scalePair.pairing = EMPTY_PAIRING;
      this.scalePair.liveStart = null;
      this.scalePair.enteredAt = this.streamSeconds;
      this.scalePair.switchedAt = this.streamSeconds;
      this.scalePair.onHigh = false;
      this.autoGlide(this.scalePair.config.voltsLow);
    }
    if (mode === 'drift' && this.drift) this.autoGlide(this.drift.volts);
    if (mode === 'run') this.afterRunChange();
  }

  /** Simulator follows the run: each new step's voltage, with a short glide. */
  private afterRunChange(): void {
    const s = this.run;
    if (!s) return;
    if (s.current !== this.lastCurrent && isRunActive(s)) {
      this.lastCurrent = s.current;
      this.stepStartedAt[s.current] = this.streamSeconds;
      if (this.sim && this.mode === 'run') this.autoGlide(s.steps[s.current].nominalVolts);
    }
  }

  /** The simulator following the app by itself (run steps, scale pair, drift), unless the drive is patched. */
  private autoGlide(volts: number): void {
    if (!this.patched) this.glideTo(volts, SIM_GLIDE_SECONDS);
  }

  private glideTo(volts: number, seconds: number): void {
    if (!this.sim) return;
    const now = this.streamSeconds;
    const from = this.cvAt(now);
    if (from === volts && this.glide.to === volts) return;
    this.glide = { from, to: volts, t0: now, seconds: Math.max(0, seconds) };
  }

  private cvAt(t: number): number {
    const g = this.glide;
    if (g.seconds <= 0 || t >= g.t0 + g.seconds) return g.to;
    if (t <= g.t0) return g.from;
    return g.from + ((g.to - g.from) * (t - g.t0)) / g.seconds;
  }

  /**
   * Audio from the capture worklet (one channel). The block is only read during the call.
   *
   * @param block - Samples, ±1 full scale.
   * @param dropped - Blocks the worklet dropped since its last message.
   */
  pushLive(block: Float32Array, dropped = 0): void {
    if (this.sourceKind !== 'live' || !this.tracker) return;
    this.dropped += dropped;
    // The worklet dropped audio just before this block: a break in the stream, which the tracker's
    // windows fit around (each side its own phase) and report (`breaks`, flag `spans-break`).
    if (dropped > 0) this.tracker.markBreak();
    this.process(block);
  }

  /**
   * Renders and analyses the simulator's output for `seconds` of real time (at most 0.5 s at once, so
   * a stalled timer does not cause a burst).
   */
  tickSim(seconds: number): void {
    if (this.sourceKind !== 'sim' || !this.sim || !this.tracker) return;
    this.simOwed += Math.min(0.5, Math.max(0, seconds)) * this.sampleRateHz;
    while (this.simOwed >= SIM_CHUNK) {
      this.simOwed -= SIM_CHUNK;
      this.renderSimChunk();
    }
  }

  private renderSimChunk(): void {
    const sim = this.sim;
    if (!sim) return;
    const fs = this.sampleRateHz;
    if (this.mode === 'scale-pair' && this.scalePair && !this.patched) {
      const tp = this.scalePair;
      const now = this.simSamples / fs;
      if (now - tp.switchedAt >= tp.config.alternateSeconds) {
        tp.switchedAt = now;
        tp.onHigh = !tp.onHigh;
        this.glideTo(tp.onHigh ? tp.config.voltsHigh : tp.config.voltsLow, SIM_GLIDE_SECONDS);
      }
    }
    for (let i = 0; i < SIM_CHUNK; i++) this.simCv[i] = this.cvAt((this.simSamples + i) / fs);
    const t0 = this.host.nowMs();
    sim.render(this.simBlock, this.simCv);
    this.simBusyMs += this.host.nowMs() - t0;
    this.simSamples += SIM_CHUNK;
    this.process(this.simBlock);
  }

  private process(block: Float32Array): void {
    const tracker = this.tracker;
    if (!tracker) return;
    const t0 = this.host.nowMs();
    tracker.push(block, (r) => this.onReading(r));
    const ms = this.host.nowMs() - t0;
    this.busyMs += ms;
    this.maxBlockMs = Math.max(this.maxBlockMs, ms);
    this.statAudioSeconds += block.length / this.sampleRateHz;
    if (this.statAudioSeconds >= 1) {
      this.host.post({
        type: 'stats',
        loadPercent: (100 * this.busyMs) / (1000 * this.statAudioSeconds),
        simLoadPercent: (100 * this.simBusyMs) / (1000 * this.statAudioSeconds),
        maxBlockMs: this.maxBlockMs,
        sampleRateHz: this.sampleRateHz,
        droppedBlocks: this.dropped,
        maxCaptureMs: this.maxCaptureMs,
      });
      this.busyMs = 0;
      this.simBusyMs = 0;
      this.statAudioSeconds = 0;
      this.maxBlockMs = 0;
    }
  }

  private onReading(r: PitchReading): void {
    const tracker = this.tracker;
    if (!tracker) return;
    let runChanged = false;
    if (this.run && this.mode === 'run') {
      const before = this.run;
      const f = feedReading(before, r, (a, b) => {
        const t0 = this.host.nowMs();
        const m = tracker.averageOfSpan(a, b);
        this.maxCaptureMs = Math.max(this.maxCaptureMs, this.host.nowMs() - t0);
        return m;
      });
      this.run = f.state;
      if (f.capturedStep !== null) {
        if (f.measured) this.details[f.capturedStep] = captureDetail(f.measured);
        this.capturedAt[f.capturedStep] = r.timeSeconds;
      }
      this.afterRunChange();
      const quiet = (p: RunState['phase']) => p === 'paused' || p === 'finished' || p === 'aborted';
      runChanged = !(quiet(before.phase) && before.phase === this.run.phase);
    }
    this.liveDetector.push(r);
    let scalePair: ScalePairView | undefined;
    if (this.mode === 'scale-pair' && this.scalePair) scalePair = this.updateScalePair(r);
    if (this.mode === 'drift' && this.drift) this.updateDrift(r);
    const msg: FromEngine = {
      type: 'tick',
      reading: r,
      streamSeconds: tracker.elapsedSeconds,
      settled: this.liveDetector.current() !== null,
      simVolts: this.sim ? this.cvAt(tracker.elapsedSeconds) : null,
      ...(runChanged || this.runDirty ? { run: this.snapshot() } : {}),
      ...(scalePair ? { scalePair } : {}),
    };
    this.runDirty = false;
    this.host.post(msg);
  }

  private snapshot(): RunSnapshot | null {
    if (!this.run) return null;
    if (this.run.phase !== 'paused') this.pausedReason = null;
    return {
      state: this.run,
      pausedReason: this.run.phase === 'paused' ? (this.pausedReason ?? PAUSED_BY_USER) : null,
      waitingForInput: this.sourceKind === 'none',
      details: { ...this.details },
      calibration: this.calibrator.of(this.run, this.details),
      stepStartedAt: [...this.stepStartedAt],
      capturedAt: [...this.capturedAt],
    };
  }

  private postRun(): void {
    this.host.post({ type: 'run', run: this.snapshot() });
  }

  private updateScalePair(r: PitchReading): ScalePairView {
    const tp = this.scalePair as ScalePairState;
    if (r.timeSeconds < tp.enteredAt) {
      return { low: null, high: null, result: null, status: 'settling', unexpected: null };
    }
    const u = tp.detector.push(r);
    const open = tp.detector.current();
    let status: ScalePairView['status'] = u.status.kind === 'no-signal' ? 'no-signal' : 'settling';
    tp.liveStart = null;
    if (open && open.startSeconds >= tp.enteredAt) {
      status = 'settled';
      tp.liveStart = open.startSeconds;
      tp.pairing = pairPlateau(tp.pairing, { hz: open.meanHz, startSeconds: open.startSeconds });
    }
    const { result, unexpected } = checkPairing(tp.pairing, tp.config);
    const side = (s: ScalePairSideState | null) =>
      s ? { hz: s.hz, live: tp.liveStart !== null && s.startSeconds === tp.liveStart } : null;
    return { low: side(tp.pairing.low), high: side(tp.pairing.high), result, status, unexpected };
  }

  private updateDrift(r: PitchReading): void {
    const d = this.drift as DriftState;
    if (r.kind !== 'ok') return;
    if (!d.bins.started) {
      // Start once the pitch has settled at the held voltage (after the simulator's glide, or once the
      // user has set the voltage), so the hold does not begin with the step into it.
      const g = this.glide;
      const gliding =
        this.sim !== null &&
        (this.patched ? r.timeSeconds < g.t0 + g.seconds : this.cvAt(r.timeSeconds) !== d.volts);
      d.detector.push(r);
      if (gliding || d.detector.current() === null) return;
      d.bins.start(r.timeSeconds, r.hz);
    }
    if (d.bins.push(r.timeSeconds, r.hz)) this.postDrift();
  }

  private postDrift(): void {
    const d = this.drift;
    if (!d) {
      this.host.post({ type: 'drift', drift: null });
      return;
    }
    const readings = d.bins.readings;
    const first = readings[0]?.hz ?? 1;
    let result: DriftView['result'];
    let rates: DriftView['rates'] = [];
    try {
      result = analyzeDrift(readings, {
        windowSeconds: d.windowSeconds,
        confirmSeconds: d.windowSeconds / 2,
      });
      rates = driftRateSeries(readings, { windowSeconds: d.windowSeconds });
    } catch (err) {
      result = { kind: 'error', message: err instanceof Error ? err.message : String(err) };
    }
    this.host.post({
      type: 'drift',
      drift: {
        volts: d.volts,
        points: readings.map((x) => ({ t: x.timeSeconds, cents: 1200 * Math.log2(x.hz / first) })),
        result,
        rates,
        windowSeconds: d.windowSeconds,
      },
    });
  }

  /**
   * A recording through `analyzeRecording` (see wav-analysis.ts). A live run in progress is paused (the
   * engine is busy with the file meanwhile, so live audio would arrive late) and otherwise left as it
   * is: its captures stay, whatever the file gives.
   */
  private analyzeWav(
    input: { readonly file?: Blob; readonly bytes?: ArrayBuffer },
    fileName: string,
    request: WavAnalysisRequest,
  ): void {
    this.host.post({ type: 'wav-started', fileName });
    if (this.run) {
      if (isRunActive(this.run) && this.run.phase !== 'paused') {
        this.run = runReducer(this.run, { type: 'pause' });
        this.pausedReason = `Paused while the file ${fileName} was analysed. Resume to go on.`;
        this.postRun();
      }
    }
    const { file, bytes } = input;
    const read = this.host.readBlob?.bind(this.host);
    const outcome =
      file && read
        ? analyzeWavSource(
            sliceByteSource(file.size, (a, b) => read(file, a, b)),
            request,
          )
        : analyzeWavBytes(new Uint8Array(bytes ?? new ArrayBuffer(0)), request);
    this.host.post({ type: 'wav-done', fileName, outcome });
  }
}
