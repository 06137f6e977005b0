/**
 * A live run that starts at a sub-audio pitch, through the engine the worker hosts (renderer/src/engine/core.ts),
 * in process with the test harness (test/helpers/engine.ts): the simulator plays the demo batch's LFO core
 * (dsp/sim, 'ol2-0208', 2 Hz at 0 V) and the run walks 0, 1, 2, 3 V (2, 4, 8, 16 Hz) hands-free. Time is
 * counted in samples rendered, never on a clock. Truth is the simulator's own pitch (`trueHz`).
 */
import { describe, expect, it } from 'vitest';
import { captureSecondsFor, CAPTURE_MIN_CYCLES, DEFAULT_RUN_OPTIONS } from '../dsp/calibration/index.ts';
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
    const { core, lastRun } = engineHarness();
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
  });
});
