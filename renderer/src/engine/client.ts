/**
 * The page's side of the engine worker: sends commands, and folds the worker's messages into one
 * immutable view that React reads with `useSyncExternalStore`. Folding is a pure function
 * ({@link foldEngineMessage}), tested without a worker.
 */
import type { PitchReading } from '../../../dsp/pitch/index.ts';
import type { DriftView, FromEngine, RunSnapshot, ToEngine, ScalePairView } from './protocol.ts';
import type { WavAnalysisOutcome } from './wav-analysis.ts';

/** One point of the strip chart's history. */
export interface HistoryPoint {
  readonly t: number;
  readonly hz: number;
  readonly uncertaintyCents: number;
}

/** Engine statistics as last reported: the worker's `stats` message (protocol.ts) without its tag. */
export type EngineStats = Omit<Extract<FromEngine, { type: 'stats' }>, 'type'>;

/** Everything the page shows from the engine. */
export interface EngineView {
  readonly reading: PitchReading | null;
  readonly settled: boolean;
  readonly streamSeconds: number;
  readonly simVolts: number | null;
  /** Readings with a pitch over the last {@link HISTORY_SECONDS}, oldest first. */
  readonly history: readonly HistoryPoint[];
  readonly run: RunSnapshot | null;
  readonly scalePair: ScalePairView | null;
  readonly drift: DriftView | null;
  readonly source: {
    readonly kind: 'none' | 'live' | 'sim';
    readonly sampleRateHz: number | null;
    readonly reason?: string;
  };
  /**
   * The last time a source started at a rate other than the one before, with whether a run in progress
   * was moved onto the new clock; cleared when a source starts at the same rate or stops.
   */
  readonly rateChange: {
    readonly fromHz: number;
    readonly toHz: number;
    readonly runRebased: boolean;
  } | null;
  readonly stats: EngineStats | null;
  /** The last "Open WAV…": being analysed (outcome null), or its outcome. */
  readonly wav: { readonly fileName: string; readonly outcome: WavAnalysisOutcome | null } | null;
  readonly lastError: string | null;
}

/** Seconds of readings the strip chart keeps. */
export const HISTORY_SECONDS = 10;

/** The view before any message. */
export const INITIAL_VIEW: EngineView = {
  reading: null,
  settled: false,
  streamSeconds: 0,
  simVolts: null,
  history: [],
  run: null,
  scalePair: null,
  drift: null,
  source: { kind: 'none', sampleRateHz: null },
  rateChange: null,
  stats: null,
  wav: null,
  lastError: null,
};

/**
 * The view after one message from the engine. Pure.
 *
 * @example foldEngineMessage(INITIAL_VIEW, { type: 'run', run: null }).run // null
 */
export function foldEngineMessage(v: EngineView, m: FromEngine): EngineView {
  switch (m.type) {
    case 'tick': {
      const r = m.reading;
      let history = v.history;
      if (r.kind === 'ok') {
        const cut = r.timeSeconds - HISTORY_SECONDS;
        let k = 0;
        while (k < history.length && history[k].t < cut) k++;
        history = [...history.slice(k), { t: r.timeSeconds, hz: r.hz, uncertaintyCents: r.uncertaintyCents }];
      } else if (history.length > 0 && history[history.length - 1].t > r.timeSeconds) {
        history = []; // a new stream clock
      }
      return {
        ...v,
        reading: r,
        settled: m.settled,
        streamSeconds: m.streamSeconds,
        simVolts: m.simVolts,
        history,
        run: m.run !== undefined ? m.run : v.run,
        scalePair: m.scalePair ?? v.scalePair,
      };
    }
    case 'run':
      return { ...v, run: m.run };
    case 'drift':
      return { ...v, drift: m.drift };
    case 'source':
      return {
        ...v,
        source: { kind: m.kind, sampleRateHz: m.sampleRateHz, ...(m.reason ? { reason: m.reason } : {}) },
        rateChange:
          m.kind === 'none'
            ? v.rateChange
            : m.previousSampleRateHz !== undefined && m.sampleRateHz !== null
              ? { fromHz: m.previousSampleRateHz, toHz: m.sampleRateHz, runRebased: m.runRebased === true }
              : null,
        history: [],
        reading: m.kind === 'none' ? null : v.reading,
        settled: false,
      };
    case 'stats': {
      const { type: _type, ...stats } = m;
      return { ...v, stats };
    }
    case 'wav-started':
      return { ...v, wav: { fileName: m.fileName, outcome: null } };
    case 'wav-done':
      return { ...v, wav: { fileName: m.fileName, outcome: m.outcome } };
    case 'error':
      return { ...v, lastError: m.message };
  }
}

/** The worker and the view, for React. */
export class EngineClient {
  private view: EngineView = INITIAL_VIEW;
  private readonly listeners = new Set<() => void>();
  private readonly worker: Worker;
  private readonly messageListeners = new Set<(m: FromEngine) => void>();

  constructor() {
    this.worker = new Worker(new URL('./engine.worker.ts', import.meta.url), {
      type: 'module',
      name: 'spanmeter-engine',
    });
    this.worker.onmessage = (e: MessageEvent<FromEngine>) => {
      this.view = foldEngineMessage(this.view, e.data);
      for (const f of this.messageListeners) f(e.data);
      for (const f of this.listeners) f();
    };
    this.worker.onerror = (e) => {
      this.view = { ...this.view, lastError: `engine: ${e.message}` };
      for (const f of this.listeners) f();
    };
  }

  /** Sends a command; ports and buffers in `transfer` move to the worker. */
  send(msg: ToEngine, transfer: Transferable[] = []): void {
    this.worker.postMessage(msg, transfer);
  }

  /** Called for every message after the view is updated (autosave hooks on to it). */
  onMessage(f: (m: FromEngine) => void): () => void {
    this.messageListeners.add(f);
    return () => this.messageListeners.delete(f);
  }

  subscribe = (f: () => void): (() => void) => {
    this.listeners.add(f);
    return () => this.listeners.delete(f);
  };

  getView = (): EngineView => this.view;
}
