/**
 * MIDI to a MIDI-to-CV converter through Web MIDI (`navigator.requestMIDIAccess`, without sysex):
 * one note per step, a note-off whenever the note changes, pitch bend only where the user's converter
 * is set up for it, and on stop the converter's 0 V note played and released, so that the last byte
 * sent is a note-off and the CV rests at 0 V (MIDI 1.0 Detailed Specification for the messages).
 */
import {
  noteOffBytes,
  noteOnBytes,
  pitchBendBytes,
  PITCH_BEND_CENTRE,
  type MidiStep,
} from '../../../dsp/drive/index.ts';

/** What the drive needs of a Web MIDI output port. */
export interface MidiPortLike {
  readonly id: string;
  readonly name?: string | null;
  readonly state?: string;
  send(data: number[] | Uint8Array, timestamp?: number): void;
}

/** A MIDI output as the picker lists it. */
export interface MidiOutputInfo {
  readonly id: string;
  readonly name: string;
}

/** Web MIDI access as far as the drive uses it. */
export interface MidiAccessLike {
  readonly outputs: { forEach(cb: (port: MidiPortLike, key: string) => void): void };
  onstatechange: ((e: Event) => void) | null;
}

/** Outcome of {@link requestMidi}. */
export type MidiAccessResult =
  { readonly ok: true; readonly access: MidiAccessLike } | { readonly ok: false; readonly message: string };

/** Asks for MIDI access (no sysex). Never throws. */
export async function requestMidi(): Promise<MidiAccessResult> {
  const nav = navigator as Navigator & { requestMIDIAccess?: (o?: { sysex?: boolean }) => Promise<unknown> };
  if (typeof nav.requestMIDIAccess !== 'function')
    return { ok: false, message: 'This browser has no Web MIDI: MIDI drive is not available here.' };
  try {
    const access = (await nav.requestMIDIAccess({ sysex: false })) as MidiAccessLike;
    return { ok: true, access };
  } catch (err) {
    const name = err instanceof Error ? err.name : '';
    return {
      ok: false,
      message:
        name === 'NotAllowedError' || name === 'SecurityError'
          ? 'MIDI access was refused: allow MIDI for Spanmeter, then choose the MIDI drive again.'
          : `MIDI could not be opened (${err instanceof Error ? err.message : String(err)}).`,
    };
  }
}

/** The output ports of an access object. */
export function midiOutputs(access: MidiAccessLike): MidiPortLike[] {
  const out: MidiPortLike[] = [];
  access.outputs.forEach((p) => out.push(p));
  return out;
}

/** A converter on one port and channel. */
export class MidiDrive {
  private note: number | null = null;
  private bend: number | null = null;
  private stopped = false;

  /**
   * @param port - The output port.
   * @param channel - MIDI channel, 1–16.
   * @param zeroVoltsNote - The converter's note for 0 V.
   */
  constructor(
    readonly port: MidiPortLike,
    readonly channel: number,
    readonly zeroVoltsNote: number,
  ) {}

  /** The note sounding, or null. */
  get currentNote(): number | null {
    return this.note;
  }

  private send(bytes: number[]): void {
    this.port.send(bytes);
  }

  /** Moves to a step: bend first (if used), then note-off of the old note and note-on of the new. */
  setStep(step: MidiStep): void {
    if (this.stopped) return;
    if (step.bend !== null && step.bend !== this.bend) {
      this.send(pitchBendBytes(this.channel, step.bend));
      this.bend = step.bend;
    }
    if (step.note === this.note) return;
    if (this.note !== null) this.send(noteOffBytes(this.channel, this.note));
    this.send(noteOnBytes(this.channel, step.note));
    this.note = step.note;
  }

  /**
   * Stops: bend back to centre where it was used, the 0 V note played and released (so the CV rests at
   * 0 V), and nothing is sent after. Safe to call twice.
   */
  stop(): void {
    if (this.stopped) return;
    this.stopped = true;
    try {
      if (this.bend !== null && this.bend !== PITCH_BEND_CENTRE)
        this.send(pitchBendBytes(this.channel, PITCH_BEND_CENTRE));
      if (this.note !== null && this.note !== this.zeroVoltsNote) {
        this.send(noteOffBytes(this.channel, this.note));
        this.send(noteOnBytes(this.channel, this.zeroVoltsNote));
      }
      if (this.note !== null) this.send(noteOffBytes(this.channel, this.zeroVoltsNote));
    } catch {
      // The port went away: nothing more can be sent.
    }
    this.note = null;
  }
}
