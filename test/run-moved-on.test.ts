/**
 * A stepped source that does not wait for the screen (a sequencer, a recording, a hurried hand): each
 * voltage is held 3 s, less than a unit with a thermal tail needs to stop creeping measurably. The run
 * must still capture every step once, from the last full window before the voltage moved on, with the
 * creep counted into its uncertainty and the step flagged `still-settling`, never drop it and fall behind
 * the source. The truth is the simulator's own (dsp/sim/simulate.ts StepTruth, whose converter physics its
 * tests check against docs/facts.md); cents after A. J. Ellis (1885).
 */
import { describe, expect, it } from 'vitest';
import { findDemoUnit, planSchedule, renderOscillator } from '../dsp/sim/index.ts';
import { engineHarness } from './helpers/engine.ts';

const cents = (hz: number, ref: number) => 1200 * Math.log2(hz / ref);
const BLOCK = 1024;

describe('a source that moves on before the creep has died out', () => {
  it('captures each 3 s step once, from before the move, within 0.1 cent, flagged where it crept', () => {
    // Unit OL3-0417 (invented Ostlund Lane batch): a thermal tail of −0.1 cent per volt, τ = 0.8 s.
    const unit = findDemoUnit('ol3-0417')!;
    const volts = [0, 1, 2, 3];
    // After the last step the source goes back to 0 V, as a looping sequence or recording does.
    const schedule = planSchedule([...volts, 0], { holdSeconds: 3, glideSeconds: 0.15 });
    const rec = renderOscillator({ ...unit.options, snrDb: 70, sampleRateHz: 48_000 }, schedule);
    const { core, lastRun } = engineHarness();
    // The worker hands the engine the worklet's port; the engine itself only reads the rate here.
    core.handle({
      type: 'source-live',
      sampleRateHz: rec.sampleRateHz,
      port: null as unknown as MessagePort,
    });
    core.handle({ type: 'run-start', plan: { id: 'custom', label: 'test', volts } });
    for (let i = 0; i + BLOCK <= rec.samples.length; i += BLOCK)
      core.pushLive(rec.samples.slice(i, i + BLOCK));
    const run = lastRun()!;
    console.log(
      'moved-on captures:',
      JSON.stringify(
        run.state.steps.map((st, i) => ({
          volts: st.nominalVolts,
          offCents: st.capture ? cents(st.capture.hz, rec.truth[i].recordedHz) : null,
          u: st.capture?.uncertaintyCents,
          flags: st.capture?.flags,
          window: st.capture && [st.capture.startSeconds, st.capture.endSeconds],
          holdStart: rec.truth[i].startSeconds,
        })),
      ),
    );
    expect(run.state.phase).toBe('finished');
    expect(run.state.steps.map((s) => s.status)).toEqual(['captured', 'captured', 'captured', 'captured']);
    expect(run.state.log.filter((n) => n.kind === 'unexpected-pitch')).toEqual([]);
    for (const [i, st] of run.state.steps.entries()) {
      const c = st.capture!;
      const truth = rec.truth[i];
      const off = cents(c.hz, truth.recordedHz);
      // The browser test's target: within 0.1 cent of the true pitch.
      expect(Math.abs(off), `${st.nominalVolts} V off by ${off} cents`).toBeLessThan(0.1);
      // The window lies inside the step's hold, before the glide to the next voltage.
      expect(c.startSeconds).toBeGreaterThan(truth.startSeconds);
      expect(c.endSeconds).toBeLessThan(rec.truth[i + 1].startSeconds - 0.15);
      // What is left of the tail is inside the stated uncertainty (k = 2).
      expect(Math.abs(off)).toBeLessThan(2 * c.uncertaintyCents + 0.005);
    }
    // The steps after the first were taken when the voltage moved on, with the creep counted and flagged.
    const moved = run.state.steps.slice(1, -1).map((s) => s.capture!);
    for (const c of moved) {
      if (c.flags.includes('still-settling')) expect(c.components.settlingCents).toBeGreaterThan(0);
    }
  });
});
