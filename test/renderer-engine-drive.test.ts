/**
 * The engine with the drive patched into the simulator's control input, in Node: the simulator follows
 * only the drive (not the run's nominal voltages), and a hands-off run, set step by step through the
 * calibrated simulated output, captures every step within 0.05 cent of the simulator's truth at the
 * voltage the simulated jack really carries (dsp/sim/simulate.ts trueHz; cents after A. J. Ellis, 1885).
 */
import { describe, expect, it } from 'vitest';
import {
  SIM_METER_SPEC,
  fitDriveCalibration,
  meterUncertainty,
  nextCalibrationLevel,
  simMeterReading,
  type CalibrationReading,
} from '../dsp/drive/index.ts';
import { trueHz } from '../dsp/sim/index.ts';
import { Drive } from '../renderer/src/drive/drive.ts';
import { DEFAULT_DRIVE_SETTINGS } from '../renderer/src/drive/use-drive.ts';
import { simOptions, simSettingsForUnit } from '../renderer/src/lib/sim-settings.ts';
import { engineHarness } from './helpers/engine.ts';

const cents = (hz: number, ref: number) => 1200 * Math.log2(hz / ref);

describe('EngineCore with the drive patched in', () => {
  const options = simOptions(simSettingsForUnit('ol3-0417'));

  it('leaves the simulator where the drive put it when the run moves on', () => {
    const { core } = engineHarness();
    core.handle({ type: 'source-sim', sampleRateHz: 48_000, options, volts: 0 });
    core.handle({ type: 'sim-patch', patched: true });
    core.handle({ type: 'sim-volts', volts: 0.5, glideSeconds: 0 });
    core.handle({ type: 'run-start', plan: { id: 'custom', label: 'test', volts: [2, 3] } });
    core.tickSim(0.5);
    expect(core.simVolts).toBe(0.5);
    core.handle({ type: 'sim-patch', patched: false });
    core.handle({ type: 'run-event', event: { type: 'skip' } });
    core.tickSim(0.5);
    expect(core.simVolts).toBe(3);
  });

  it('runs 0–7 V hands-off through the calibrated simulated output, each step within 0.05 cent of the truth', async () => {
    const { core, lastRun } = engineHarness();
    core.handle({ type: 'source-sim', sampleRateHz: 48_000, options, volts: 0 });
    core.handle({ type: 'sim-patch', patched: true });
    const send = (volts: number, glideSeconds: number) =>
      core.handle({ type: 'sim-volts', volts, glideSeconds });
    const opened = await Drive.open({ ...DEFAULT_DRIVE_SETTINGS, kind: 'sim' }, { simSend: send });
    if (!opened.ok) throw new Error(opened.message);
    const drive = opened.drive;
    // Calibration with the simulated meter.
    const rs: CalibrationReading[] = [];
    for (;;) {
      const l = nextCalibrationLevel([0, 2.333, 4.667, 7], rs, drive.nominalGain);
      if (l === null) break;
      const sent = drive.setLevel(l);
      core.tickSim(0.1);
      rs.push({ level: sent, readingVolts: simMeterReading(drive.simTrueVolts ?? 0) });
    }
    const fit = fitDriveCalibration(rs, SIM_METER_SPEC, { expectedGain: drive.nominalGain });
    if (fit.kind !== 'ok') throw new Error(fit.kind);
    drive.setCalibration(fit.calibration);
    drive.rest();
    // Hands-off: the drive follows the run's steps; nothing else touches it.
    const plan = [0, 1, 2, 3, 4, 5, 6, 7];
    core.handle({ type: 'run-start', plan: { id: 'custom', label: 'test', volts: plan } });
    const truthVolts: number[] = [];
    let last = -1;
    for (let i = 0; i < 1000; i++) {
      const run = lastRun();
      const s = run?.state;
      if (!s || s.phase === 'finished') break;
      if (s.current !== last && s.phase !== 'paused') {
        last = s.current;
        const a = drive.apply(s.steps[s.current].nominalVolts);
        if (!a.ok) throw new Error(a.message);
        truthVolts[s.current] = a.applied.trueVolts ?? NaN;
        core.handle({
          type: 'run-event',
          event: {
            type: 'set-applied-volts',
            stepIndex: s.current,
            volts: a.applied.volts,
            uncertaintyVolts: a.applied.uncertaintyVolts,
          },
        });
      }
      core.tickSim(0.05);
    }
    const run = lastRun();
    expect(run?.state.phase).toBe('finished');
    const started = run!.stepStartedAt[0] ?? 0;
    const done = Math.max(...run!.capturedAt.map((x) => x ?? 0));
    console.log(
      `drive hands-off in Node: Start to 8-step table in ${(done - started).toFixed(2)} s of audio`,
    );
    for (const st of run!.state.steps) {
      const truth = trueHz(truthVolts[st.index], options);
      const off = cents(st.capture!.hz, truth);
      expect(Math.abs(off), `${st.nominalVolts} V off by ${off} cents`).toBeLessThan(0.05);
      // The step carries the calibrated voltage, within the simulated meter's bound of the truth.
      expect(st.appliedVolts).toBeCloseTo(st.nominalVolts, 9);
      expect(Math.abs(st.appliedVolts! - truthVolts[st.index])).toBeLessThan(
        meterUncertainty(truthVolts[st.index], SIM_METER_SPEC).boundVolts,
      );
      expect(st.appliedVoltsUncertainty).toBeGreaterThan(0);
    }
  });
});
