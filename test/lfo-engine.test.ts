/**
 * A live run that starts at a sub-audio pitch, through the engine the worker hosts (renderer/src/engine/core.ts),
 * in process with the test harness (test/helpers/engine.ts): the simulator plays the demo batch's LFO core
 * (dsp/sim, 'ol2-0208', 2 Hz at 0 V) and the run walks 0, 1, 2, 3 V (2, 4, 8, 16 Hz) hands-free. Time is
 * counted in samples rendered, never on a clock. Truth is the simulator's own pitch (`trueHz`).
 */
import { describe, expect, it } from 'vitest';
import {
  captureSecondsFor,
  CAPTURE_MIN_CYCLES,
  createRun,
  DEFAULT_RUN_OPTIONS,
  resolveRunOptions,
  stepSecondsAt,
} from '../dsp/calibration/index.ts';
import type { RunSnapshot } from '../renderer/src/engine/protocol.ts';
import { promptFor, subAudioNote, subAudioPlanHint } from '../renderer/src/ui/RunPanel.tsx';
import { trueHz } from '../dsp/sim/index.ts';
import { LIVE_LOWEST_HZ } from '../renderer/src/engine/core.ts';
import { simOptions, simSettingsForUnit } from '../renderer/src/lib/sim-settings.ts';
import { engineHarness } from './helpers/engine.ts';

const cents = (hz: number, ref: number) => 1200 * Math.log2(hz / ref);

describe('a live run in the LFO range', () => {
  it('captures every step of a plan that starts at 2 Hz, each within 0.05 cent over at least ten cycles', () => {
    const options = simOptions(simSettingsForUnit('ol2-0208'));
    expect(trueHz(0, options)).toBeCloseTo(2, 3);
    expect(LIVE_LOWEST_HZ).toBeLessThanOrEqual(2);
    const { core, lastRun, messages } = engineHarness();
    core.handle({ type: 'source-sim', sampleRateHz: 48_000, options, volts: 0 });
    core.handle({ type: 'run-start', plan: { id: 'custom', label: 'lfo', volts: [0, 1, 2, 3] } });
    // At most 120 s of simulated audio, in 50 ms ticks.
    for (let i = 0; i < 2400 && lastRun()?.state.phase !== 'finished'; i++) core.tickSim(0.05);
    const run = lastRun();
    expect(run?.state.phase).toBe('finished');
    for (const st of run!.state.steps) {
      const truth = trueHz(st.nominalVolts, options);
      const cap = st.capture!;
      expect(cap.source, `${st.nominalVolts} V`).toBe('host');
      const off = cents(cap.hz, truth);
      // The target for the LFO range: within 0.05 cent over windows of at least ten cycles.
      expect(Math.abs(off), `${st.nominalVolts} V (${truth.toFixed(3)} Hz) off by ${off} cents`).toBeLessThan(
        0.05,
      );
      expect((cap.endSeconds - cap.startSeconds) * truth).toBeGreaterThanOrEqual(CAPTURE_MIN_CYCLES * 0.999);
      expect(cap.flags).toEqual([]);
      // A sub-audio step takes its live window (ten cycles), settling and its capture (ten cycles).
      const took = run!.capturedAt[st.index]! - run!.stepStartedAt[st.index]!;
      if (truth < 3) expect(took).toBeGreaterThan((2 * CAPTURE_MIN_CYCLES) / truth);
      expect(took).toBeLessThan(2 * captureSecondsFor(DEFAULT_RUN_OPTIONS, truth) + 10);
    }
    // What the run said along the way: the capture prompt names the ten-cycle window, and a step expected
    // below 20 Hz says about how long it takes.
    const snaps = messages.flatMap((m): RunSnapshot[] =>
      m.type === 'run' && m.run ? [m.run] : m.type === 'tick' && m.run ? [m.run] : [],
    );
    const capturing0 = snaps.find((r) => r.state.phase === 'capturing' && r.state.current === 0);
    expect(promptFor(capturing0!.state, true).detail).toMatch(
      /^Averaging the settled pitch over 5 s \(ten cycles of this low pitch\)/,
    );
    const waiting1 = snaps.find((r) => r.state.phase === 'apply-voltage' && r.state.current === 1);
    expect(subAudioNote(waiting1!.state)).toMatch(/^Below 20 Hz a step takes longer: about 6 s at 4\.0\d Hz/);
    expect(promptFor(waiting1!.state, true).detail).toContain('about 6 s at 4.0');
    const waiting3 = snaps.find((r) => r.state.phase === 'apply-voltage' && r.state.current === 3);
    expect(subAudioNote(waiting3!.state)).toMatch(/about 2 s at 16\.0\d Hz/);
  });
});

describe('how long a sub-audio step takes', () => {
  const o = resolveRunOptions();
  it.each([
    // Ten periods to read, the 0.5 s settle, then a capture of max(1 s, ten periods) (dsp/calibration/run.ts).
    [2, 5 + 0.5 + 5],
    [4, 2.5 + 0.5 + 2.5],
    [8.18, 10 / 8.18 + 0.5 + 10 / 8.18],
    [16, 0.625 + 0.5 + 1],
    [440, 10 / 440 + 0.5 + 1],
  ])('%f Hz: %f s', (hz, seconds) => {
    expect(stepSecondsAt(o, hz)).toBeCloseTo(seconds, 9);
  });

  it('the capture window holds ten periods below 10 Hz and captureSeconds above', () => {
    expect(captureSecondsFor(o, 2)).toBe(5);
    expect(captureSecondsFor(o, 10)).toBe(1);
    expect(captureSecondsFor(o, 440)).toBe(1);
    expect(captureSecondsFor(o, null)).toBe(1);
  });

  it('refuses a pitch that is not a positive frequency', () => {
    expect(() => stepSecondsAt(o, 0)).toThrow('hz must be a positive frequency, got 0');
  });

  it('says nothing of it before any pitch is known', () => {
    expect(subAudioNote(createRun([0, 1]))).toBeNull();
  });

  it('the plan says it in words', () => {
    expect(subAudioPlanHint()).toBe(
      'steps below 20 Hz (LFO range, down to 2 Hz) take longer: about 11 s each at 2 Hz, 3 s at 8 Hz',
    );
  });
});
