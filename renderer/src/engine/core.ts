/**
 * The engine: everything that touches audio or runs the signal processing, for the worker to host.
 * It owns the pitch tracker (`dsp/stream.ts`), the simulated oscillator (`dsp/simulate.ts`), the
 * calibration run (`dsp/run.ts`, whose plateau detection is signal processing too), the two-point
 * check and the drift hold. It has no worker globals: the worker passes a `post` function and feeds it
 * audio, so tests drive it directly in Node.
 *
 * Buffers for audio are allocated when a source starts; per block, the engine allocates only the
 * readings and messages it emits.
 */
import { twoPointIntervalError, type TwoPointResult } from '../../../dsp/advice.ts';
import { analyzeDrift, driftRateSeries, type DriftReading } from '../../../dsp/drift.ts';
import { createPlateauDetector, type PlateauDetector } from '../../../dsp/plateau.ts';
import type { PitchReading } from '../../../dsp/reading.ts';
import { createRun, runReducer, type RunState } from '../../../dsp/run.ts';
import {
  createOscillatorStream,
  type OscillatorOptions,
  type OscillatorStream,
} from '../../../dsp/simulate.ts';
import { PitchTracker } from '../../../dsp/stream.ts';
import { captureDetail, type CaptureDetail } from '../lib/analysis.ts';
import type {
  DriftView,
  EngineMode,
  FromEngine,
  RunSnapshot,
  ToEngine,
  TwoPointConfig,
  TwoPointView,
} from './protocol.ts';
import { feedReading, rebaseRun } from './run-host.ts';
import { analyzeWavBytes, type WavAnalysisRequest } from './wav-analysis.ts';

/** How the engine talks back and tells time. */
export interface EngineHost {
  post(message: FromEngine, transfer?: Transferable[]): void;
  /** Milliseconds, monotonic (performance.now). */
  nowMs(): number;
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
/** Two plateaus closer than this are the same side of the two-point check, cents (a quarter octave). */
const SAME_SIDE_CENTS = 300;
/**
 * The scale pair's unexpected-pitch guard, cents: an interval further than this from the pair's nominal
 * interval is not a trimming error but a wrong or stale voltage, and gives no instruction (the same
 * margin as the run's default pitch tolerance, dsp/run.ts DEFAULT_RUN_OPTIONS).
 */
export const PAIR_GUARD_CENTS = 150;

interface TwoPointState {
  config: TwoPointConfig;
  detector: PlateauDetector;
  low: { hz: number; start: number } | null;
  high: { hz: number; start: number } | null;
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
  startedAt: number | null;
  readings: DriftReading[];
  binStart: number;
  binSumCents: number;
  binCount: number;
  refHz: number | null;
  lastPost: number;
  /** Settling of the held voltage, fed only with readings taken after the hold was asked for. */
  detector: PlateauDetector;
}

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
  // Run.
  private run: RunState | null = null;
  private details: Record<number, CaptureDetail> = {};
  private stepStartedAt: (number | null)[] = [];
  private capturedAt: (number | null)[] = [];
  private lastCurrent = -1;
  private runDirty = false;
  /** Always-on plateau detector for the live readout's settled indicator. */
  private readonly liveDetector: PlateauDetector = createPlateauDetector();
  // Modes.
  private mode: EngineMode = 'run';
  private twoPoint: TwoPointState | null = null;
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
          const active = r !== null && this.mode === 'run' && r.phase !== 'finished' && r.phase !== 'aborted';
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
      case 'sim-volts':
        this.manualVolts = msg.volts;
        this.glideTo(msg.volts, msg.glideSeconds);
        return;
      case 'mode':
        this.setMode(msg.mode);
        return;
      case 'run-start':
        this.run = createRun({ id: msg.plan.id, label: msg.plan.label, volts: msg.plan.volts }, msg.options);
        this.resetRunSide(msg.plan.volts.length);
        this.setMode('run');
        this.afterRunChange();
        this.postRun();
        return;
      case 'run-restore':
        this.run = rebaseRun(msg.state);
        this.resetRunSide(this.run.steps.length);
        this.afterRunChange();
        this.postRun();
        return;
      case 'run-event':
        if (!this.run) return;
        this.run = runReducer(this.run, msg.event);
        this.afterRunChange();
        this.postRun();
        return;
      case 'run-close':
        this.run = null;
        this.postRun();
        return;
      case 'two-point-config':
        this.twoPoint = {
          config: msg.config,
          detector: createPlateauDetector(),
          low: null,
          high: null,
          liveStart: null,
          enteredAt: this.streamSeconds,
          switchedAt: this.streamSeconds,
          onHigh: false,
        };
        if (this.mode === 'two-point') this.glideTo(msg.config.voltsLow, SIM_GLIDE_SECONDS);
        return;
      case 'two-point-reset':
        if (this.twoPoint) {
          this.twoPoint.detector.reset();
          this.twoPoint.low = null;
          this.twoPoint.high = null;
          this.twoPoint.enteredAt = this.streamSeconds;
        }
        return;
      case 'drift-start':
        this.drift = {
          volts: msg.volts,
          windowSeconds: msg.windowSeconds,
          startedAt: null,
          readings: [],
          binStart: 0,
          binSumCents: 0,
          binCount: 0,
          refHz: null,
          lastPost: 0,
          detector: createPlateauDetector(),
        };
        this.setMode('drift');
        this.glideTo(msg.volts, SIM_GLIDE_SECONDS);
        this.postDrift();
        return;
      case 'drift-stop':
        this.drift = null;
        this.postDrift();
        return;
      case 'wav-analyze':
        this.analyzeWav(msg.bytes, msg.fileName, msg.request);
        return;
    }
  }

  private startSource(kind: 'live' | 'sim', sampleRateHz: number): void {
    const previousRate = this.sampleRateHz;
    // The glide is timed on the stream clock, which restarts with the new tracker: settle it on its
    // target, or the simulator would replay the old voltage until the new clock caught up with the old.
    this.glide = { from: this.glide.to, to: this.glide.to, t0: 0, seconds: 0 };
    this.tracker = new PitchTracker({ sampleRateHz });
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
      // the user.
      const was = this.run.phase;
      runRebased = was !== 'finished' && was !== 'aborted';
      this.run = rebaseRun(this.run);
      if (was !== this.run.phase || this.run.lastSeconds === null) this.postRun();
      this.stepStartedAt = this.stepStartedAt.map(() => null);
    }
    if (this.twoPoint) this.twoPoint.detector.reset();
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
    if (this.run && this.run.phase !== 'finished' && this.run.phase !== 'aborted') {
      this.run = rebaseRun(this.run);
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
      const p = this.run.phase;
      if (p !== 'paused' && p !== 'finished' && p !== 'aborted') {
        this.run = runReducer(this.run, { type: 'pause' });
        this.postRun();
      }
    }
    this.mode = mode;
    if (mode === 'two-point' && this.twoPoint) {
      // A fresh start: nothing heard before the pair was opened (the run's last step, say) counts.
      this.twoPoint.detector.reset();
      this.twoPoint.low = null;
      this.twoPoint.high = null;
      this.twoPoint.liveStart = null;
      this.twoPoint.enteredAt = this.streamSeconds;
      this.twoPoint.switchedAt = this.streamSeconds;
      this.twoPoint.onHigh = false;
      this.glideTo(this.twoPoint.config.voltsLow, SIM_GLIDE_SECONDS);
    }
    if (mode === 'drift' && this.drift) this.glideTo(this.drift.volts, SIM_GLIDE_SECONDS);
    if (mode === 'run') this.afterRunChange();
  }

  /** Simulator follows the run: each new step's voltage, with a short glide. */
  private afterRunChange(): void {
    const s = this.run;
    if (!s) return;
    if (s.current !== this.lastCurrent && s.phase !== 'finished' && s.phase !== 'aborted') {
      this.lastCurrent = s.current;
      this.stepStartedAt[s.current] = this.streamSeconds;
      if (this.sim && this.mode === 'run') this.glideTo(s.steps[s.current].nominalVolts, SIM_GLIDE_SECONDS);
    }
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
    if (this.mode === 'two-point' && this.twoPoint) {
      const tp = this.twoPoint;
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
    let twoPoint: TwoPointView | undefined;
    if (this.mode === 'two-point' && this.twoPoint) twoPoint = this.updateTwoPoint(r);
    if (this.mode === 'drift' && this.drift) this.updateDrift(r);
    const msg: FromEngine = {
      type: 'tick',
      reading: r,
      streamSeconds: tracker.elapsedSeconds,
      settled: this.liveDetector.current() !== null,
      simVolts: this.sim ? this.cvAt(tracker.elapsedSeconds) : null,
      ...(runChanged || this.runDirty ? { run: this.snapshot() } : {}),
      ...(twoPoint ? { twoPoint } : {}),
    };
    this.runDirty = false;
    this.host.post(msg);
  }

  private snapshot(): RunSnapshot | null {
    if (!this.run) return null;
    return {
      state: this.run,
      details: { ...this.details },
      stepStartedAt: [...this.stepStartedAt],
      capturedAt: [...this.capturedAt],
    };
  }

  private postRun(): void {
    this.host.post({ type: 'run', run: this.snapshot() });
  }

  private updateTwoPoint(r: PitchReading): TwoPointView {
    const tp = this.twoPoint as TwoPointState;
    if (r.timeSeconds < tp.enteredAt) {
      return { low: null, high: null, result: null, status: 'settling', unexpected: null };
    }
    const u = tp.detector.push(r);
    const open = tp.detector.current();
    let status: TwoPointView['status'] = u.status.kind === 'no-signal' ? 'no-signal' : 'settling';
    tp.liveStart = null;
    if (open && open.startSeconds >= tp.enteredAt) {
      status = 'settled';
      tp.liveStart = open.startSeconds;
      const cand = { hz: open.meanHz, start: open.startSeconds };
      const near = (side: { hz: number } | null) =>
        side !== null && Math.abs(1200 * Math.log2(cand.hz / side.hz)) < SAME_SIDE_CENTS;
      if (near(tp.low)) tp.low = cand;
      else if (near(tp.high)) tp.high = cand;
      else if (tp.low === null) tp.low = cand;
      else if (tp.high === null) tp.high = cand;
      else if (tp.low.start < tp.high.start) tp.low = cand;
      else tp.high = cand;
      if (tp.low && tp.high && tp.low.hz > tp.high.hz) [tp.low, tp.high] = [tp.high, tp.low];
    }
    let result: TwoPointResult | null = null;
    let unexpected: TwoPointView['unexpected'] = null;
    if (tp.low && tp.high) {
      const measuredCents = 1200 * Math.log2(tp.high.hz / tp.low.hz);
      const expectedCents = 1200 * (tp.config.voltsHigh - tp.config.voltsLow);
      if (Math.abs(measuredCents - expectedCents) > PAIR_GUARD_CENTS) {
        unexpected = { measuredCents, expectedCents };
      } else {
        try {
          result = twoPointIntervalError(
            tp.low.hz,
            tp.high.hz,
            tp.config.voltsLow,
            tp.config.voltsHigh,
            tp.config.toleranceCents,
          );
        } catch {
          result = null;
        }
      }
    }
    const side = (s: { hz: number; start: number } | null) =>
      s ? { hz: s.hz, live: tp.liveStart !== null && s.start === tp.liveStart } : null;
    return { low: side(tp.low), high: side(tp.high), result, status, unexpected };
  }

  private updateDrift(r: PitchReading): void {
    const d = this.drift as DriftState;
    if (r.kind !== 'ok') return;
    if (d.startedAt === null) {
      // Start once the pitch has settled at the held voltage (after the simulator's glide, or once the
      // user has set the voltage), so the hold does not begin with the step into it.
      const gliding = this.sim !== null && this.cvAt(r.timeSeconds) !== d.volts;
      d.detector.push(r);
      if (gliding || d.detector.current() === null) return;
      d.startedAt = r.timeSeconds;
      d.binStart = r.timeSeconds;
      d.refHz = r.hz;
    }
    const refHz = d.refHz as number;
    d.binSumCents += 1200 * Math.log2(r.hz / refHz);
    d.binCount++;
    if (r.timeSeconds - d.binStart >= 1) {
      const cents = d.binSumCents / d.binCount;
      const mid = (d.binStart + r.timeSeconds) / 2;
      d.readings.push({ timeSeconds: mid - d.startedAt, hz: refHz * Math.pow(2, cents / 1200) });
      d.binStart = r.timeSeconds;
      d.binSumCents = 0;
      d.binCount = 0;
      this.postDrift();
    }
  }

  private postDrift(): void {
    const d = this.drift;
    if (!d) {
      this.host.post({ type: 'drift', drift: null });
      return;
    }
    const first = d.readings[0]?.hz ?? 1;
    let result: DriftView['result'];
    let rates: DriftView['rates'] = [];
    try {
      result = analyzeDrift(d.readings, {
        windowSeconds: d.windowSeconds,
        confirmSeconds: d.windowSeconds / 2,
      });
      rates = driftRateSeries(d.readings, { windowSeconds: d.windowSeconds });
    } catch (err) {
      result = { kind: 'error', message: err instanceof Error ? err.message : String(err) };
    }
    this.host.post({
      type: 'drift',
      drift: {
        volts: d.volts,
        points: d.readings.map((x) => ({ t: x.timeSeconds, cents: 1200 * Math.log2(x.hz / first) })),
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
  private analyzeWav(bytes: ArrayBuffer, fileName: string, request: WavAnalysisRequest): void {
    this.host.post({ type: 'wav-started', fileName });
    if (this.run) {
      const p = this.run.phase;
      if (p !== 'paused' && p !== 'finished' && p !== 'aborted') {
        this.run = runReducer(this.run, { type: 'pause' });
        this.postRun();
      }
    }
    const outcome = analyzeWavBytes(new Uint8Array(bytes), request);
    this.host.post({ type: 'wav-done', fileName, outcome });
  }
}
