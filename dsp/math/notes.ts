import type { Cents, Hertz } from './units.ts';

/** Cents in one octave. */
export const CENTS_PER_OCTAVE = 1200;

/** The standard concert pitch, A4 = 440 Hz (ISO 16:1975). */
export const A4_HZ: Hertz = 440;

/** MIDI note number of A4. */
const A4_MIDI = 69;

const NOTE_NAMES = ['C', 'C#', 'D', 'D#', 'E', 'F', 'F#', 'G', 'G#', 'A', 'A#', 'B'] as const;

function requirePositiveFinite(name: string, value: number): void {
  if (!Number.isFinite(value) || value <= 0) {
    throw new RangeError(`${name} must be a finite number greater than 0, got ${value}`);
  }
}

/**
 * Interval from `refHz` up to `hz`, in cents: `1200·log2(hz/refHz)` (A. J. Ellis, 1885).
 *
 * @param hz - Frequency, Hz, > 0.
 * @param refHz - Reference frequency, Hz, > 0.
 * @returns Cents; positive when `hz` is above `refHz`.
 * @throws RangeError when either frequency is not a finite positive number.
 * @example hzToCents(660, 440) // 701.955…
 */
export function hzToCents(hz: Hertz, refHz: Hertz): Cents {
  requirePositiveFinite('hz', hz);
  requirePositiveFinite('refHz', refHz);
  return CENTS_PER_OCTAVE * Math.log2(hz / refHz);
}

/**
 * Frequency ratio of an interval in cents: `2^(cents/1200)` (Ellis, 1885).
 *
 * @param cents - Interval, cents, finite.
 * @example centsToRatio(1) // 1.000577789…
 */
export function centsToRatio(cents: Cents): number {
  if (!Number.isFinite(cents)) throw new RangeError(`cents must be a finite number, got ${cents}`);
  return Math.pow(2, cents / CENTS_PER_OCTAVE);
}

/**
 * Interval of a frequency ratio in cents: `1200·log2(ratio)` (Ellis, 1885).
 *
 * @param ratio - Frequency ratio, > 0.
 * @example ratioToCents(3 / 2) // 701.955…
 */
export function ratioToCents(ratio: number): Cents {
  requirePositiveFinite('ratio', ratio);
  return CENTS_PER_OCTAVE * Math.log2(ratio);
}

/**
 * Frequency of a (possibly fractional) MIDI note number in 12-tone equal temperament:
 * `a4Hz·2^((n − 69)/12)` (MIDI 1.0 note numbering; A4 = 440 Hz per ISO 16:1975).
 *
 * @param midi - MIDI note number (69 = A4, 60 = C4), finite.
 * @param a4Hz - Tuning reference, Hz, > 0. Default 440.
 * @example midiToHz(60) // 261.6255653…
 */
export function midiToHz(midi: number, a4Hz: Hertz = A4_HZ): Hertz {
  if (!Number.isFinite(midi)) throw new RangeError(`midi must be a finite number, got ${midi}`);
  requirePositiveFinite('a4Hz', a4Hz);
  return a4Hz * Math.pow(2, (midi - A4_MIDI) / 12);
}

/**
 * Fractional MIDI note number of a frequency: `69 + 12·log2(hz/a4Hz)`.
 *
 * @param hz - Frequency, Hz, > 0.
 * @param a4Hz - Tuning reference, Hz, > 0. Default 440.
 * @example hzToMidi(440) // 69
 */
export function hzToMidi(hz: Hertz, a4Hz: Hertz = A4_HZ): number {
  requirePositiveFinite('hz', hz);
  requirePositiveFinite('a4Hz', a4Hz);
  return A4_MIDI + 12 * Math.log2(hz / a4Hz);
}

/** The equal-tempered note nearest a frequency, and how far the frequency lies from it. */
export interface NearestNote {
  /** Scientific pitch name with octave, middle C = C4 (the convention of ISO 16 and ASA): `A4`, `C#3`. */
  readonly name: string;
  /** MIDI note number of the nearest note (60 = C4). */
  readonly midi: number;
  /** Frequency of that note, Hz. */
  readonly noteHz: Hertz;
  /** Cents from that note to the measured frequency, in [−50, +50). */
  readonly cents: Cents;
}

/**
 * Name of a MIDI note in scientific pitch notation, middle C (MIDI 60) = C4.
 *
 * @param midi - Integer MIDI note number (may be negative for sub-audio pitches).
 * @example midiToName(61) // 'C#4'
 */
export function midiToName(midi: number): string {
  if (!Number.isInteger(midi)) throw new RangeError(`midi must be an integer, got ${midi}`);
  const pc = ((midi % 12) + 12) % 12;
  const octave = Math.floor(midi / 12) - 1;
  return `${NOTE_NAMES[pc]}${octave}`;
}

/**
 * The nearest 12-TET note to a frequency and the deviation from it in cents.
 *
 * @param hz - Frequency, Hz, > 0.
 * @param a4Hz - Tuning reference, Hz, > 0. Default 440 (ISO 16:1975).
 * @example nearestNote(445) // { name: 'A4', midi: 69, noteHz: 440, cents: 19.56… }
 */
export function nearestNote(hz: Hertz, a4Hz: Hertz = A4_HZ): NearestNote {
  const m = hzToMidi(hz, a4Hz);
  const midi = Math.round(m);
  const noteHz = midiToHz(midi, a4Hz);
  return { name: midiToName(midi), midi, noteHz, cents: hzToCents(hz, noteHz) };
}
