import { describe, expect, it } from 'vitest';
import { Midi, Note } from '@tonaljs/tonal';
import {
  A4_HZ,
  CENTS_PER_OCTAVE,
  centsToRatio,
  hzToCents,
  hzToMidi,
  midiToHz,
  midiToName,
  nearestNote,
  ratioToCents,
} from '../dsp/math/index.ts';

/** Relative difference |a − b| / |b|. */
const rel = (a: number, b: number): number => Math.abs(a - b) / Math.abs(b);

describe('concert pitch and note frequencies', () => {
  it('A4 = 440 Hz (ISO 16:1975)', () => {
    expect(A4_HZ).toBe(440);
    expect(midiToHz(69)).toBe(440);
    expect(hzToMidi(440)).toBe(69);
  });

  // Published 12-TET values with A4 = 440 Hz (ISO 16:1975; f = 440·2^((n − 69)/12)), to the 4 decimals
  // usually tabulated.
  it.each([
    ['C4 (middle C)', 60, 261.6256],
    ['C0', 12, 16.3516],
    ['MIDI 0 (C-1)', 0, 8.1758],
    ['A0 (lowest piano key)', 21, 27.5],
    ['C8 (highest piano key)', 108, 4186.009],
  ])('%s = %f Hz', (_name, midi, hz) => {
    expect(midiToHz(midi)).toBeCloseTo(hz, 4);
  });

  // Checked against @tonaljs/tonal, a general-purpose music-theory library: Midi.midiToFreq and Note.freq.
  it('matches tonal Midi.midiToFreq for every MIDI note 0–127, at A4 = 440 and 432 Hz', () => {
    for (let n = 0; n <= 127; n++) {
      expect(rel(midiToHz(n), Midi.midiToFreq(n)), `MIDI ${n}`).toBeLessThan(1e-12);
      expect(rel(midiToHz(n, 432), Midi.midiToFreq(n, 432)), `MIDI ${n} at 432 Hz`).toBeLessThan(1e-12);
    }
  });

  it('matches tonal Note.freq by name for every MIDI note 0–127', () => {
    for (let n = 0; n <= 127; n++) {
      const name = midiToName(n);
      const f = Note.freq(name);
      expect(f, name).not.toBeNull();
      expect(rel(midiToHz(n), f as number), name).toBeLessThan(1e-12);
    }
  });

  it('names every MIDI note 0–127 as tonal Midi.midiToNoteName does with sharps (middle C = C4)', () => {
    for (let n = 0; n <= 127; n++) {
      expect(midiToName(n), `MIDI ${n}`).toBe(Midi.midiToNoteName(n, { sharps: true }));
    }
    expect(midiToName(60)).toBe('C4');
  });

  it('round trips MIDI → Hz → MIDI, including fractional notes', () => {
    for (let n = -24; n <= 150; n += 0.37) {
      expect(hzToMidi(midiToHz(n))).toBeCloseTo(n, 10);
      expect(hzToMidi(midiToHz(n, 415), 415)).toBeCloseTo(n, 10);
    }
  });
});

describe('cents (A. J. Ellis, 1885: cents = 1200·log2 ratio)', () => {
  it('an octave is 1200 cents, a 12-TET semitone 100', () => {
    expect(CENTS_PER_OCTAVE).toBe(1200);
    expect(hzToCents(880, 440)).toBe(1200);
    expect(ratioToCents(2)).toBe(1200);
    expect(hzToCents(midiToHz(70), midiToHz(69))).toBeCloseTo(100, 10);
  });

  it('the just fifth 3:2 is 701.955 cents (Ellis, 1885)', () => {
    expect(ratioToCents(3 / 2)).toBeCloseTo(701.955, 3);
    expect(hzToCents(660, 440)).toBeCloseTo(701.955, 3);
  });

  it('one cent is a ratio of 1.000577790 (Ellis, 1885; 2^(1/1200))', () => {
    expect(centsToRatio(1)).toBeCloseTo(1.00057779, 9);
    expect(centsToRatio(1)).toBe(Math.pow(2, 1 / 1200));
  });

  it('a hundredth of a cent is a ratio of 1 + 5.7762e-6 (derived: ln 2 · 0.01 / 1200)', () => {
    expect(centsToRatio(0.01) - 1).toBeCloseTo(5.7762e-6, 10);
  });

  it('hzToCents is antisymmetric and ratioToCents(1) is 0', () => {
    expect(hzToCents(440, 660)).toBeCloseTo(-701.955, 3);
    expect(ratioToCents(1)).toBe(0);
    expect(centsToRatio(0)).toBe(1);
  });

  it('round trips ratio → cents → ratio to 1e-14 relative', () => {
    for (const r of [1e-3, 0.5, 0.999, 1, 1.000001, 1.5, 2, 3.14159, 1000]) {
      expect(rel(centsToRatio(ratioToCents(r)), r), `ratio ${r}`).toBeLessThan(1e-14);
    }
    for (const c of [-4800, -701.955, -0.01, 0, 0.01, 1, 386.3137, 12000]) {
      expect(ratioToCents(centsToRatio(c))).toBeCloseTo(c, 9);
    }
  });

  it('a gated cycle count is coarse: one count in a 1 s gate at 100 Hz is 17.226 cents (docs/facts.md, derived)', () => {
    // This is why Spanmeter measures phase over the whole window rather than counting cycles: to reach a
    // hundredth of a cent at 100 Hz by counting, the gate would need to last about half an hour.
    expect(hzToCents(101, 100)).toBeCloseTo(17.226, 3);
    const gateSeconds = 1 / (100 * (centsToRatio(0.01) - 1)); // one count = 0.01 cent
    expect(gateSeconds).toBeGreaterThan(1700);
    expect(gateSeconds).toBeLessThan(1750);
  });
});

describe('nearestNote', () => {
  // Expected values from tonal (Midi.midiToNoteName, Midi.midiToFreq) and Ellis's cents formula.
  it.each([
    [440, 'A4', 69, 0],
    [445, 'A4', 69, 1200 * Math.log2(445 / 440)],
    [261.6256, 'C4', 60, 1200 * Math.log2(261.6256 / Midi.midiToFreq(60))],
    [16.3516, 'C0', 12, 1200 * Math.log2(16.3516 / Midi.midiToFreq(12))],
    [1000, 'B5', 83, 1200 * Math.log2(1000 / Midi.midiToFreq(83))],
    [29.5, 'A#0', 22, 1200 * Math.log2(29.5 / Midi.midiToFreq(22))],
    [30, 'B0', 23, 1200 * Math.log2(30 / Midi.midiToFreq(23))],
  ])('%f Hz is %s (MIDI %i) %f cents', (hz, name, midi, cents) => {
    const n = nearestNote(hz);
    expect(n.name).toBe(name);
    expect(n.name).toBe(Midi.midiToNoteName(midi, { sharps: true }));
    expect(n.midi).toBe(midi);
    expect(rel(n.noteHz, Midi.midiToFreq(midi))).toBeLessThan(1e-12);
    expect(n.cents).toBeCloseTo(cents, 9);
  });

  it('keeps the deviation within ±50 cents over the audio range', () => {
    for (let hz = 8; hz < 20000; hz *= 1.0173) {
      const n = nearestNote(hz);
      expect(n.cents).toBeGreaterThanOrEqual(-50 - 1e-9);
      expect(n.cents).toBeLessThanOrEqual(50 + 1e-9);
      expect(rel(n.noteHz * centsToRatio(n.cents), hz)).toBeLessThan(1e-12);
    }
  });

  it('follows the A4 reference: 432 Hz is A4 at A4 = 432 Hz, and −31.77 cents from A4 at 440', () => {
    expect(nearestNote(432, 432)).toMatchObject({ name: 'A4', midi: 69, cents: 0 });
    expect(nearestNote(432).cents).toBeCloseTo(1200 * Math.log2(432 / 440), 9);
    expect(nearestNote(432).cents).toBeCloseTo(-31.77, 2);
  });
});

describe('invalid input: misuse throws a RangeError naming the parameter and its value', () => {
  it.each([
    [() => hzToCents(0, 440), 'hz must be a finite number greater than 0, got 0'],
    [() => hzToCents(-1, 440), 'hz must be a finite number greater than 0, got -1'],
    [() => hzToCents(440, NaN), 'refHz must be a finite number greater than 0, got NaN'],
    [() => hzToCents(Infinity, 440), 'hz must be a finite number greater than 0, got Infinity'],
    [() => ratioToCents(0), 'ratio must be a finite number greater than 0, got 0'],
    [() => centsToRatio(NaN), 'cents must be a finite number, got NaN'],
    [() => midiToHz(Infinity), 'midi must be a finite number, got Infinity'],
    [() => midiToHz(60, 0), 'a4Hz must be a finite number greater than 0, got 0'],
    [() => hzToMidi(0), 'hz must be a finite number greater than 0, got 0'],
    [() => hzToMidi(440, -440), 'a4Hz must be a finite number greater than 0, got -440'],
    [() => midiToName(60.5), 'midi must be an integer, got 60.5'],
    [() => nearestNote(0), 'hz must be a finite number greater than 0, got 0'],
    [() => nearestNote(440, NaN), 'a4Hz must be a finite number greater than 0, got NaN'],
  ])('%#: %s', (fn, message) => {
    expect(fn).toThrow(RangeError);
    expect(fn).toThrow(message);
  });
});
