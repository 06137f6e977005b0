/**
 * An optional signal when a step is captured: a short flash of the page, a short beep, or both, for a
 * technician whose eyes are on the trimmer. Off by default; the choice is kept between sessions.
 */
import { useCallback, useEffect, useRef, useState } from 'react';
import type { RunState } from '../../../dsp/calibration/index.ts';
import { pageStorage } from './pageStorage.ts';

export type CaptureSignal = 'off' | 'flash' | 'sound' | 'both';

/** Where the choice is kept. */
export const CAPTURE_SIGNAL_KEY = 'spanmeter.capture-signal.v1';

function initial(): CaptureSignal {
  try {
    const v = pageStorage()?.getItem(CAPTURE_SIGNAL_KEY);
    if (v === 'flash' || v === 'sound' || v === 'both' || v === 'off') return v;
  } catch {
    // storage refused
  }
  return 'off';
}

/** A 90 ms beep at 1 kHz, quiet, through its own audio context (never the measuring one). */
function beep(ctxRef: { current: AudioContext | null }): void {
  try {
    const ctx = ctxRef.current ?? new AudioContext();
    ctxRef.current = ctx;
    const o = ctx.createOscillator();
    const g = ctx.createGain();
    o.frequency.value = 1000;
    g.gain.setValueAtTime(0.08, ctx.currentTime);
    g.gain.exponentialRampToValueAtTime(0.0001, ctx.currentTime + 0.09);
    o.connect(g).connect(ctx.destination);
    o.start();
    o.stop(ctx.currentTime + 0.1);
  } catch {
    // no audio output: the flash (if chosen) still shows
  }
}

/**
 * Watches the run's captured count and signals each new capture.
 *
 * @returns The choice, its setter, and whether the flash is showing now.
 */
export function useCaptureSignal(run: RunState | null): {
  signal: CaptureSignal;
  setSignal(s: CaptureSignal): void;
  flashing: boolean;
} {
  const [signal, setSignalState] = useState<CaptureSignal>(initial);
  const [flashing, setFlashing] = useState(false);
  const ctxRef = useRef<AudioContext | null>(null);
  const lastRef = useRef<number | null>(null);
  const count = run ? run.steps.filter((s) => s.capture !== null).length : null;
  useEffect(() => {
    const last = lastRef.current;
    lastRef.current = count;
    if (count === null || last === null || count <= last || signal === 'off') return;
    if (signal === 'sound' || signal === 'both') beep(ctxRef);
    if (signal === 'flash' || signal === 'both') {
      setFlashing(true);
      const id = window.setTimeout(() => setFlashing(false), 350);
      return () => window.clearTimeout(id);
    }
  }, [count, signal]);
  const setSignal = useCallback((s: CaptureSignal) => {
    setSignalState(s);
    try {
      pageStorage()?.setItem(CAPTURE_SIGNAL_KEY, s);
    } catch {
      // not kept
    }
  }, []);
  return { signal, setSignal, flashing };
}
