/**
 * The drive behind its one interface (renderer/src/drive/drive.ts), on a recording MIDI port and the
 * simulated bench, in Node: the user's maximum holds for a converter's rounded notes and bends, a
 * maximum lowered below the held level sends the drive to 0 V, and only the simulated drive moves the
 * simulator; and a voltage typed while the run moves on from a captured step goes to the next step.
 *
 * References: MIDI 1.0 Detailed Specification (Note On 0x9n, Note Off 0x8n, n = channel − 1; pitch bend
 * 0xEn, 14 bits, centre 8192) and @tonaljs/tonal's Midi.toMidi for note numbers (middle C = C4 = 60).
 */
import { describe, expect, it } from 'vitest';
import { Midi } from '@tonaljs/tonal';
import { BENCH_METER_4_5_DIGIT, fitDriveCalibration, type DriveCalibration } from '../dsp/drive/index.ts';
import { Drive, type DriveSettings } from '../renderer/src/drive/drive.ts';
import type { MidiPortLike } from '../renderer/src/drive/midi-output.ts';
import { stepForSetVolts } from '../renderer/src/drive/use-drive.ts';
import { createRun, type RunState } from '../dsp/calibration/index.ts';

// Demo scenario (invented): the Ostlund Lane workshop's MIDI-to-CV converter on channel 3, 0 V on C2.
const SETTINGS: DriveSettings = {
  kind: 'midi',
  dcDeviceId: 'default',
  dcChannel: 0,
  nominalVoltsPerFullScale: 10,
  midiPortId: 'ol-cv-1',
  midiChannel: 3,
  zeroVoltsNote: 36,
  bendRangeSemitones: null,
  maxVolts: 7,
  rampSeconds: 0.05,
  meter: BENCH_METER_4_5_DIGIT,
};

function recordingPort(): MidiPortLike & { sent: number[][] } {
  const sent: number[][] = [];
  return { id: 'ol-cv-1', name: 'Ostlund Lane CV', sent, send: (d) => void sent.push(Array.from(d)) };
}

/** A converter 0.2 % wide with +3 mV offset, read at notes 36, 60, 96 and 120 (nominal 0, 2, 5, 7 V). */
function converterCal(): DriveCalibration {
  const r = fitDriveCalibration(
    [0, 2, 5, 7].map((level) => ({ level, readingVolts: 1.002 * level + 0.003 })),
    BENCH_METER_4_5_DIGIT,
    { expectedGain: 1 },
  );
  if (r.kind !== 'ok') throw new Error(r.message);
  return r.calibration;
}

async function openMidi(settings: Partial<DriveSettings> = {}) {
  const port = recordingPort();
  const r = await Drive.open({ ...SETTINGS, ...settings }, { midiPort: port });
  if (!r.ok) throw new Error(r.message);
  r.drive.setCalibration(converterCal());
  return { drive: r.drive, port };
}

describe('the maximum holds for a converter’s notes', () => {
  it('a step whose nearest note lies above the maximum gets the note below it', async () => {
    const { drive, port } = await openMidi();
    const r = drive.apply(7);
    if (!r.ok) throw new Error(r.message);
    // The nearest note to 7 V on this converter is 120 (7.017 V), above the 7 V maximum: 119 is taken.
    expect(r.applied.note).toBe(Midi.toMidi('B8')); // 119
    expect(r.applied.volts).toBeLessThanOrEqual(7);
    expect(r.applied.volts).toBeCloseTo(1.002 * (83 / 12) + 0.003, 9);
    // MIDI 1.0: channel 3 → Note On status 0x92.
    expect(port.sent).toEqual([[0x92, 119, 100]]);
  });

  it('a step within the maximum gets its nearest note (2 V above C2 is middle C, 60)', async () => {
    const { drive } = await openMidi();
    const r = drive.apply(2);
    if (!r.ok) throw new Error(r.message);
    expect(r.applied.note).toBe(Midi.toMidi('C4'));
    expect(Midi.toMidi('C4')).toBe(60);
  });

  it('with pitch bend, the bent level stays within the maximum too', async () => {
    const { drive, port } = await openMidi({ bendRangeSemitones: 2 });
    const r = drive.apply(7);
    if (!r.ok) throw new Error(r.message);
    expect(r.applied.volts).toBeLessThanOrEqual(7);
    // Within a bend step (4 semitones / 16383, far below 0.1 mV) plus the 0.1 mV step back of the maximum.
    expect(7 - r.applied.volts).toBeLessThan(2e-4);
    // MIDI 1.0: pitch bend on channel 3 is 0xE2, then two 7-bit bytes.
    expect(port.sent[0][0]).toBe(0xe2);
  });
});

describe('lowering the maximum below the level held', () => {
  it('sends the drive to 0 V: the converter’s 0 V note played and released', async () => {
    const { drive, port } = await openMidi();
    const r = drive.apply(5);
    if (!r.ok) throw new Error(r.message);
    expect(drive.updateSettings({ ...SETTINGS, maxVolts: 3 })).toBe(true);
    expect(drive.level).toBe(0);
    // Note On 0x92 for the 5 V note (96), then Note Off 0x82 of it, the 0 V note (36) on and off.
    expect(port.sent).toEqual([
      [0x92, 96, 100],
      [0x82, 96, 0],
      [0x92, 36, 100],
      [0x82, 36, 0],
    ]);
  });

  it('leaves a level within the new maximum alone', async () => {
    const { drive, port } = await openMidi();
    drive.apply(2);
    expect(drive.updateSettings({ ...SETTINGS, maxVolts: 3 })).toBe(false);
    expect(port.sent).toEqual([[0x92, 60, 100]]);
  });
});

describe('only the simulated drive moves the simulator', () => {
  it('a MIDI drive on the simulated input sends nothing to the simulator, on a step or at rest', async () => {
    const sim: number[] = [];
    const port = recordingPort();
    const r = await Drive.open(SETTINGS, { midiPort: port, simSend: (v) => void sim.push(v) });
    if (!r.ok) throw new Error(r.message);
    r.drive.setCalibration(converterCal());
    r.drive.apply(3);
    r.drive.rest();
    expect(sim).toEqual([]);
    expect(r.drive.simTrueVolts).toBeNull();
  });

  it('the simulated drive starts its output at rest (0 level) when it opens', async () => {
    const sim: number[] = [];
    const r = await Drive.open({ ...SETTINGS, kind: 'sim' }, { simSend: (v) => void sim.push(v) });
    if (!r.ok) throw new Error(r.message);
    expect(r.drive.level).toBe(0);
    // The simulated output's own offset (+7.5 mV, dsp/drive/sim.ts) is what the jack carries at rest.
    expect(sim).toEqual([0.0075]);
  });
});

describe('a voltage typed while the run moves on belongs to the step to come', () => {
  // The run's phases (dsp/calibration/run.ts): `captured` means the step is done and the run moves on by itself.
  const run = createRun({ id: 'custom', label: 'Custom', volts: [0, 1, 2] });
  const at = (phase: RunState['phase'], current: number, captured: number[]): RunState => ({
    ...run,
    phase,
    current,
    steps: run.steps.map((st, i) => ({ ...st, status: captured.includes(i) ? 'captured' : 'pending' })),
  });

  it.each([
    ['apply-voltage', 1, [0], 1],
    ['settling', 1, [0], 1],
    ['captured', 0, [0], 1],
    ['captured', 1, [0, 1], 2],
    ['captured', 2, [0, 1, 2], null],
    ['paused', 1, [0], null],
    ['finished', 2, [0, 1, 2], null],
  ] as const)('%s on step %i (captured %j): step %s', (phase, current, captured, want) => {
    expect(stepForSetVolts(at(phase, current, [...captured]))).toBe(want);
  });
});
