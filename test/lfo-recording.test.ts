/**
 * Sub-audio steps in a recording (dsp/recording/recording.ts): a simulated run of the demo batch's LFO core
 * ('ol2-0208', 2 Hz at 0 V; dsp/sim) over 0, 1, 2, 3 V (2, 4, 8, 16 Hz), each held 12 s, is found step by
 * step and measured within 0.05 cent of the simulator's recorded pitch (its truth), over at least ten
 * cycles. MIDI note 0 is 8.18 Hz (MIDI 1.0 specification, note 69 = A4 = 440 Hz), so such a unit's low
 * end lies below the audio range.
 */
import { describe, expect, it } from 'vitest';
import { analyzeRecording, arraySource, livePass, monotoneProgress } from '../dsp/recording/index.ts';
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

  it('reads the recording twice only as far as needed, with a progress bar that never goes back', () => {
    // The first pass follows audio pitches only; once a second of readings (10 at the recording's 10 a
    // second) has said the pitch lies below its reach, the rest of that pass is not read, and the pass that
    // follows pitches down to 2 Hz carries the bar on from where it stood (common practice, no source).
    const unit = findDemoUnit('ol2-0208')!;
    const points = [0, 1];
    const rec = renderOscillator(
      { ...unit.options, sampleRateHz: 48000, snrDb: 50, seed: 4 },
      planSchedule(points, { holdSeconds: 12 }),
    );
    const source = arraySource(rec.samples, rec.sampleRateHz);
    const first = livePass(source, { readingsPerSecond: 10, stopAfterBelowRange: 10 });
    expect(first.stoppedBelowRange).toBe(true);
    expect(first.frameCount).toBeLessThan(source.frameCount / 2);
    // It stops at the end of the block (about 1.4 s) in which the tenth such reading came.
    expect(
      first.readings.filter((r) => r.kind === 'none' && r.reason === 'below-range').length,
    ).toBeGreaterThanOrEqual(10);
    const shown: number[] = [];
    const a = analyzeRecording(rec.samples, rec.sampleRateHz, { points }, (f) => shown.push(f));
    expect(a.kind).toBe('ok');
    shown.forEach((f, i) => expect(f).toBeGreaterThanOrEqual(i > 0 ? shown[i - 1] : 0));
    expect(shown.at(-1)).toBe(1);
  });
});

describe('monotoneProgress', () => {
  it('starts each pass where the bar stands and ends the last at 1', () => {
    // A progress bar that never goes back: common practice, no source. The values are exact by construction.
    const shown: number[] = [];
    const bar = monotoneProgress((f) => shown.push(f));
    const a = bar.pass();
    a(0.25);
    a(0.5);
    const b = bar.pass();
    b(0);
    b(0.5);
    b(1);
    expect(shown).toEqual([0.25, 0.5, 0.5, 0.75, 1]);
  });
});
