/**
 * The drive's adapters as plain objects in Node: the MIDI drive's byte sequence on a recording port,
 * and the drive's refusals and clamps on the simulated bench. The byte layouts are MIDI 1.0's (Note On
 * 0x9n, Note Off 0x8n, Pitch Bend 0xEn LSB first, n = channel − 1).
 */
import { describe, expect, it } from 'vitest';
import {
  SIM_DRIVE_MODEL,
  SIM_METER_SPEC,
  fitDriveCalibration,
  nextCalibrationLevel,
  planMidiStep,
  simDriveTrueVolts,
  simMeterReading,
  type CalibrationReading,
} from '../dsp/drive/index.ts';
import { Drive, driveKey, type DriveSettings } from '../renderer/src/drive/drive.ts';
import { MidiDrive } from '../renderer/src/drive/midi-output.ts';
import { DEFAULT_DRIVE_SETTINGS } from '../renderer/src/drive/use-drive.ts';

function recordingPort() {
  const sent: number[][] = [];
  return {
    sent,
    port: { id: 'p1', name: 'Bench converter', send: (d: number[] | Uint8Array) => sent.push([...d]) },
  };
}

describe('MidiDrive', () => {
  it('sends note-on per step, note-off on change, and on stop the 0 V note released; nothing after', () => {
    const { sent, port } = recordingPort();
    const m = new MidiDrive(port, 2, 36);
    m.setStep(planMidiStep(0, 36, null)!);
    m.setStep(planMidiStep(1, 36, null)!);
    m.setStep(planMidiStep(1, 36, null)!); // same note: nothing
    m.stop();
    m.setStep(planMidiStep(2, 36, null)!); // after stop: nothing
    m.stop();
    expect(sent).toEqual([
      [0x91, 36, 100],
      [0x81, 36, 0],
      [0x91, 48, 100],
      [0x81, 48, 0],
      [0x91, 36, 100],
      [0x81, 36, 0],
    ]);
  });
  it('uses pitch bend only when the converter is set up for it, and centres it on stop', () => {
    const { sent, port } = recordingPort();
    const m = new MidiDrive(port, 1, 36);
    m.setStep(planMidiStep(1.01, 36, 2)!); // +0.12 semitone on a ±2 semitone range
    m.stop();
    expect(sent[0][0]).toBe(0xe0);
    expect(sent[0][1] + 128 * sent[0][2]).toBe(8192 + Math.round((8192 * 0.12) / 2));
    expect(sent[1]).toEqual([0x90, 48, 100]);
    expect(sent.slice(2)).toEqual([
      [0xe0, 0x00, 0x40],
      [0x80, 48, 0],
      [0x90, 36, 100],
      [0x80, 36, 0],
    ]);
  });
});

describe('Drive on the simulated bench', () => {
  const settings: DriveSettings = { ...DEFAULT_DRIVE_SETTINGS, kind: 'sim', maxVolts: 5 };

  async function openSim() {
    const sent: { volts: number; glide: number }[] = [];
    const r = await Drive.open(settings, { simSend: (volts, glide) => sent.push({ volts, glide }) });
    if (!r.ok) throw new Error(r.message);
    return { drive: r.drive, sent };
  }

  it('opens at rest (0 V sent) and refuses to apply before it is calibrated', async () => {
    const { drive, sent } = await openSim();
    expect(sent).toEqual([{ volts: SIM_DRIVE_MODEL.trueOffsetVolts, glide: 0 }]);
    const r = drive.apply(1);
    expect(r).toEqual({
      ok: false,
      message: 'Calibrate the drive first: its applied voltage is not known yet.',
    });
  });

  it('applies calibrated voltages with a ramp, refuses ones above the maximum, and rests at 0 V', async () => {
    const { drive, sent } = await openSim();
    const rs: CalibrationReading[] = [];
    for (;;) {
      const l = nextCalibrationLevel([0, 1.5, 3, 4.5], rs, drive.nominalGain);
      if (l === null) break;
      const sentLevel = drive.setLevel(l);
      rs.push({ level: sentLevel, readingVolts: simMeterReading(drive.simTrueVolts ?? 0) });
    }
    const fit = fitDriveCalibration(rs, SIM_METER_SPEC, { expectedGain: 10 });
    if (fit.kind !== 'ok') throw new Error(fit.kind);
    drive.setCalibration(fit.calibration);
    const a = drive.apply(3);
    if (!a.ok) throw new Error(a.message);
    expect(a.applied.volts).toBeCloseTo(3, 9);
    expect(Math.abs((a.applied.trueVolts ?? 0) - 3)).toBeLessThan(0.003);
    expect(sent[sent.length - 1].glide).toBe(settings.rampSeconds);
    expect(drive.apply(6)).toEqual({
      ok: false,
      message: "6 V is above the drive's maximum of 5 V: lower the plan or raise the maximum.",
    });
    // Before calibration the levels were bounded by the nominal gain: nothing above 5 V was sent.
    for (const s of sent) expect(s.volts).toBeLessThanOrEqual(5);
    drive.rest();
    expect(sent[sent.length - 1].volts).toBe(simDriveTrueVolts(0));
    expect(drive.level).toBe(0);
  });

  it('keys calibrations by device and channel', () => {
    expect(driveKey({ ...DEFAULT_DRIVE_SETTINGS, kind: 'dc', dcChannel: 2 }, 'Bench DC')).toBe(
      'dc:Bench DC:3',
    );
    expect(driveKey({ ...DEFAULT_DRIVE_SETTINGS, kind: 'midi', midiChannel: 5 }, 'CV box')).toBe(
      'midi:CV box:5:36',
    );
  });
});
