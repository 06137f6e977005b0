/**
 * MIDI to a MIDI-to-CV converter: note numbers and control voltages at 1 V/oct, and the bytes sent.
 *
 * Sources: MIDI 1.0 Detailed Specification (note numbers 0–127, middle C = 60; Note On 0x9n and Note
 * Off 0x8n with n = channel − 1; Pitch Bend 0xEn with a 14-bit value sent LSB first, centre 8192).
 * At 1 V/oct one semitone is 1/12 V = 83.333 mV (docs/facts.md, "The sound card", derived).
 */
import type { Volts } from '../math/index.ts';

/** MIDI note number of middle C (MIDI 1.0). */
export const MIDDLE_C_NOTE = 60;
/** Volts per semitone at 1 V/oct, V (1/12 V). */
export const VOLTS_PER_SEMITONE: Volts = 1 / 12;
/** Pitch-bend centre (no bend), MIDI 1.0. */
export const PITCH_BEND_CENTRE = 8192;
/** Velocity of the notes sent (the converter's CV does not depend on it). */
export const DRIVE_VELOCITY = 100;

function checkNote(name: string, note: number): void {
  if (!Number.isInteger(note) || note < 0 || note > 127)
    throw new RangeError(`${name} must be an integer MIDI note in [0, 127], got ${note}`);
}

function checkChannel(channel: number): void {
  if (!Number.isInteger(channel) || channel < 1 || channel > 16)
    throw new RangeError(`channel must be an integer in [1, 16], got ${channel}`);
}

/**
 * A note's nominal control voltage on a converter that puts 0 V on `noteAtZeroVolts`: (note − n0)/12 V.
 *
 * @param note - MIDI note, integer in [0, 127].
 * @param noteAtZeroVolts - The converter's note for 0 V, integer in [0, 127] (see its manual).
 * @example noteToNominalVolts(72, 36) // 3
 */
export function noteToNominalVolts(note: number, noteAtZeroVolts: number): Volts {
  checkNote('note', note);
  checkNote('noteAtZeroVolts', noteAtZeroVolts);
  return (note - noteAtZeroVolts) * VOLTS_PER_SEMITONE;
}

/**
 * The note nearest a nominal voltage: n0 + round(12·V), or null when that is outside 0–127.
 *
 * @param volts - Nominal voltage, V, finite.
 * @param noteAtZeroVolts - The converter's note for 0 V.
 * @example nominalVoltsToNote(1, 60) // 72
 */
export function nominalVoltsToNote(volts: Volts, noteAtZeroVolts: number): number | null {
  checkNote('noteAtZeroVolts', noteAtZeroVolts);
  if (typeof volts !== 'number' || !Number.isFinite(volts))
    throw new RangeError(`volts must be a finite number, got ${volts}`);
  const n = noteAtZeroVolts + Math.round(volts / VOLTS_PER_SEMITONE);
  return n >= 0 && n <= 127 ? n : null;
}

/**
 * Note On: `[0x90 + channel − 1, note, velocity]` (MIDI 1.0).
 *
 * @param channel - MIDI channel, 1–16.
 * @param note - MIDI note, 0–127.
 * @param velocity - 1–127. Default {@link DRIVE_VELOCITY}.
 * @example noteOnBytes(1, 60) // [0x90, 60, 100]
 */
export function noteOnBytes(channel: number, note: number, velocity = DRIVE_VELOCITY): number[] {
  checkChannel(channel);
  checkNote('note', note);
  if (!Number.isInteger(velocity) || velocity < 1 || velocity > 127)
    throw new RangeError(`velocity must be an integer in [1, 127], got ${velocity}`);
  return [0x90 + channel - 1, note, velocity];
}

/**
 * Note Off: `[0x80 + channel − 1, note, 0]` (MIDI 1.0).
 *
 * @example noteOffBytes(10, 60) // [0x89, 60, 0]
 */
export function noteOffBytes(channel: number, note: number): number[] {
  checkChannel(channel);
  checkNote('note', note);
  return [0x80 + channel - 1, note, 0];
}

/**
 * Pitch Bend: `[0xE0 + channel − 1, value & 0x7f, value >> 7]` (MIDI 1.0, LSB first).
 *
 * @param value - 14-bit value, 0–16383, centre 8192.
 * @example pitchBendBytes(1, 8192) // [0xE0, 0x00, 0x40]
 */
export function pitchBendBytes(channel: number, value: number): number[] {
  checkChannel(channel);
  if (!Number.isInteger(value) || value < 0 || value > 16383)
    throw new RangeError(`pitch bend value must be an integer in [0, 16383], got ${value}`);
  return [0xe0 + channel - 1, value & 0x7f, value >> 7];
}

/**
 * The 14-bit bend value for a bend in semitones on a receiver set to ±`rangeSemitones`: 8192 +
 * round(8192·semis/range), clamped to [0, 16383].
 *
 * @param semitones - Wanted bend, semitones, finite.
 * @param rangeSemitones - The converter's bend range, semitones, in [0.1, 48].
 * @example bendValueForSemitones(1, 2) // 12288
 */
export function bendValueForSemitones(semitones: number, rangeSemitones: number): number {
  if (!Number.isFinite(rangeSemitones) || rangeSemitones < 0.1 || rangeSemitones > 48)
    throw new RangeError(`rangeSemitones must be in [0.1, 48], got ${rangeSemitones}`);
  if (!Number.isFinite(semitones)) throw new RangeError(`semitones must be finite, got ${semitones}`);
  const v = PITCH_BEND_CENTRE + Math.round((PITCH_BEND_CENTRE * semitones) / rangeSemitones);
  return Math.min(16383, Math.max(0, v));
}

/**
 * The semitones a bend value gives: (value − 8192)·range/8192.
 *
 * @example bendValueToSemitones(12288, 2) // 1
 */
export function bendValueToSemitones(value: number, rangeSemitones: number): number {
  return ((value - PITCH_BEND_CENTRE) * rangeSemitones) / PITCH_BEND_CENTRE;
}

/** What to send the converter for one wanted voltage. */
export interface MidiStep {
  readonly note: number;
  /** 14-bit bend value, or null when bend is not used. */
  readonly bend: number | null;
  /** The level (nominal volts of the note plus bend) that the calibration maps to volts. */
  readonly level: number;
}

/**
 * Chooses the note (and, where the converter follows pitch bend, the bend) for a wanted level, i.e. a
 * nominal voltage already corrected by the calibration (`levelForVolts`).
 *
 * @param level - Wanted nominal voltage, V.
 * @param noteAtZeroVolts - The converter's note for 0 V.
 * @param bendRangeSemitones - The converter's bend range, or null when it is not set up for bend.
 * @returns The step, or null when no note 0–127 reaches it.
 * @example planMidiStep(2, 36, null) // { note: 60, bend: null, level: 2 }
 */
export function planMidiStep(
  level: number,
  noteAtZeroVolts: number,
  bendRangeSemitones: number | null,
): MidiStep | null {
  const note = nominalVoltsToNote(level, noteAtZeroVolts);
  if (note === null) return null;
  const noteLevel = noteToNominalVolts(note, noteAtZeroVolts);
  if (bendRangeSemitones === null) return { note, bend: null, level: noteLevel };
  const bend = bendValueForSemitones((level - noteLevel) / VOLTS_PER_SEMITONE, bendRangeSemitones);
  return {
    note,
    bend,
    level: noteLevel + bendValueToSemitones(bend, bendRangeSemitones) * VOLTS_PER_SEMITONE,
  };
}
