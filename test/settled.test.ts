/**
 * Settled measurements (dsp/pitch/settled.ts): the sub-windows behind the repeatability are fitted with the
 * whole window's harmonics and hum handling (`PitchEstimator.estimateWithPlan`), so that mains hum beside a low
 * tone is not taken for the oscillator wandering. The stated repeatability must stay at the scale of the
 * simulated unit's own jitter, and the reading must hold the simulator's truth within its stated uncertainty
 * (coverage factor 2, JCGM 100:2008 §6.3).
 */
import { describe, expect, it } from 'vitest';
import { PitchEstimator, measureSettled } from '../dsp/pitch/index.ts';
import { findDemoUnit, planSchedule, renderOscillator } from '../dsp/sim/index.ts';
import { addNoise, centsError, tone } from './signals.ts';

describe('measureSettled beside mains hum', () => {
  // The 0 V step of demo unit OL3-0417 (dsp/sim: a 32.66 Hz saw whose pitch jitters by 0.005 cent), held 3 s,
  // with 50 Hz hum. The last 1.9 s is measured as a recording's step is (24 harmonics). 50 Hz lies 17 Hz from
  // the fundamental: four bins of a 0.27 s sub-window. Before the plan was shared, these cases stated 0.34 to
  // 0.61 cent of repeatability; without hum, 0.004.
  for (const [snrDb, humDb] of [
    [45, -35],
    [60, -35],
    [80, -30],
  ] as const) {
    it(`at ${snrDb} dB SNR with hum at ${humDb} dB: repeatability stays at the unit's own jitter`, () => {
      const unit = findDemoUnit('ol3-0417')!;
      const sim = renderOscillator(
        { ...unit.options, snrDb, humHz: 50, humDb, seed: 7 },
        planSchedule([0], { holdSeconds: 3 }),
      );
      const fs = sim.sampleRateHz;
      const x = Float64Array.from(sim.samples.subarray(Math.round(0.9 * fs), Math.round(2.8 * fs)));
      const est = new PitchEstimator(4 * fs, fs, { maxHarmonics: 24 });
      const r = measureSettled(est, x, 0, x.length, 0);
      expect(r.kind).toBe('ok');
      if (r.kind !== 'ok') return;
      expect(r.components!.repeatabilityCents, JSON.stringify(r.components)).toBeLessThan(0.02);
      // The simulator's truth: the pitch it rendered (its own record of the step).
      expect(Math.abs(centsError(r.hz, sim.truth[0].recordedHz))).toBeLessThanOrEqual(2 * r.uncertaintyCents);
    });
  }
});

describe('PitchEstimator.estimateWithPlan', () => {
  it("reads a part of a window with the window's plan, and says why not when it cannot", () => {
    const fs = 48_000;
    const x = tone('saw', 110, fs, 1, { phase: 0.1 });
    addNoise(x, 50, 9);
    const est = new PitchEstimator(x.length, fs, { maxHarmonics: 16 });
    const whole = est.estimate(x, 0, x.length);
    expect(whole.kind).toBe('ok');
    const plan = est.lastPlan();
    expect(plan).not.toBeNull();
    expect(Array.from(plan!.harmonics.slice(0, 3))).toEqual([1, 2, 3]);
    const part = est.estimateWithPlan(x, 12_000, 12_000, 110, plan!);
    expect(part.kind).toBe('ok');
    // A generated 110 Hz saw: the quarter-second part reads 110 Hz within three of its stated standard
    // uncertainties (one draw: 2σ is passed one time in twenty; common practice, no source).
    if (part.kind === 'ok')
      expect(Math.abs(centsError(part.hz, 110))).toBeLessThanOrEqual(3 * part.uncertaintyCents);
    const silent = new Float64Array(12_000);
    expect(est.estimateWithPlan(silent, 0, silent.length, 110, plan!)).toEqual({
      kind: 'none',
      reason: 'silent',
    });
    expect(est.lastPlan()).toBeNull();
    expect(() => est.estimateWithPlan(x, 0, 1000, 0, plan!)).toThrow(
      'centreHz must be a positive frequency, got 0',
    );
  });
});
