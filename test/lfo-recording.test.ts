/**
 * Sub-audio steps in a recording (dsp/recording/recording.ts): a simulated run of the demo batch's LFO core
 * ('ol2-0208', 2 Hz at 0 V; dsp/sim) over 0, 1, 2, 3 V (2, 4, 8, 16 Hz), each held 12 s, is found step by
 * step and measured within 0.05 cent of the simulator's recorded pitch (its truth), over at least ten
 * cycles. MIDI note 0 is 8.18 Hz (MIDI 1.0 specification, note 69 = A4 = 440 Hz), so such a unit's low
 * end lies below the audio range.
 */
import { describe, expect, it } from 'vitest';
import { analyzeRecording } from '../dsp/recording/index.ts';
import { findDemoUnit, planSchedule, renderOscillator } from '../dsp/sim/index.ts';

/** Cents between two frequencies: 1200·log2(f1/f2) (A. J. Ellis, 1885). */
const cents = (f1: number, f2: number) => 1200 * Math.log2(f1 / f2);

describe('a recording in the LFO range', () => {
  it('measures each step from 2 Hz up within 0.05 cent over at least ten cycles', () => {
    const unit = findDemoUnit('ol2-0208')!;
    const points = [0, 1, 2, 3];
    const rec = renderOscillator(
      { ...unit.options, sampleRateHz: 48000, snrDb: 50, seed: 3 },
      planSchedule(points, { holdSeconds: 12 }),
    );
    const a = analyzeRecording(rec.samples, rec.sampleRateHz, { points });
    if (a.kind !== 'ok') throw new Error(`expected an analysis, got ${a.code}: ${a.message}`);
    expect(a.steps.map((s) => s.volts)).toEqual(points);
    a.steps.forEach((s, i) => {
      const truth = rec.truth[i].recordedHz;
      expect(Math.abs(cents(s.hz, truth)), `${s.volts} V: ${s.hz} Hz, truth ${truth} Hz`).toBeLessThan(0.05);
      expect(s.source).toBe('window');
      expect((s.windowEndSeconds - s.windowStartSeconds) * truth).toBeGreaterThanOrEqual(10 - 1e-9);
    });
    expect(rec.truth[0].recordedHz).toBeCloseTo(2, 2);
  });
});
