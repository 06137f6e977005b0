/**
 * The drive: one of a DC-coupled interface output, a MIDI-to-CV converter or the simulated bench's
 * output, behind one interface that knows the drive's calibration and the user's maximum voltage.
 * `apply(volts)` sets a voltage (checked, calibrated, clamped, ramped) and says which voltage it
 * applied, with its uncertainty; `rest()` returns to 0 V.
 */
import {
  appliedVoltsAt,
  checkTargetVolts,
  clampLevel,
  levelBounds,
  levelForVolts,
  planMidiStep,
  simDriveTrueVolts,
  SIM_DRIVE_MODEL,
  VOLTS_PER_SEMITONE,
  type DriveCalibration,
  type MeterSpec,
  type MidiStep,
} from '../../../dsp/drive/index.ts';
import { DcOutput, openDcOutput } from './dc-output.ts';
import { MidiDrive, type MidiPortLike } from './midi-output.ts';

/** Which drive. */
export type DriveKind = 'off' | 'dc' | 'midi' | 'sim';

/** What the user chose. Plain JSON, kept in localStorage. */
export interface DriveSettings {
  readonly kind: DriveKind;
  readonly dcDeviceId: string;
  /** Output channel, from 0. */
  readonly dcChannel: number;
  /** The output's volts at full scale from its manual (used only until it is calibrated), V. */
  readonly nominalVoltsPerFullScale: number;
  readonly midiPortId: string;
  /** MIDI channel, 1–16. */
  readonly midiChannel: number;
  /** The converter's note for 0 V. */
  readonly zeroVoltsNote: number;
  /** The converter's pitch-bend range in semitones when it is set up for bend, else null. */
  readonly bendRangeSemitones: number | null;
  /** Nothing the drive sends exceeds this, V. */
  readonly maxVolts: number;
  /** Ramp between levels, s. */
  readonly rampSeconds: number;
  /** The multimeter used for the calibration. */
  readonly meter: MeterSpec;
}

/** The voltage a step got. */
export interface Applied {
  /** Calibrated voltage at the jack, V. */
  readonly volts: number;
  /** Its standard uncertainty, V. */
  readonly uncertaintyVolts: number;
  /** The level sent (sample value, or the note's nominal volts). */
  readonly level: number;
  /** The MIDI note sent, or null. */
  readonly note: number | null;
  /** Simulated bench only: the voltage the simulated jack really carries, V. */
  readonly trueVolts: number | null;
}

/** Result of {@link Drive.apply}. */
export type ApplyResult =
  { readonly ok: true; readonly applied: Applied } | { readonly ok: false; readonly message: string };

/** Sends a voltage to the simulator's control input (the engine's `sim-volts`). */
export type SimSend = (volts: number, glideSeconds: number) => void;

/** An open drive. */
export class Drive {
  private dc: DcOutput | null = null;
  private ctx: AudioContext | null = null;
  private midi: MidiDrive | null = null;
  private midiPort: MidiPortLike | null = null;
  private simLevel = 0;
  private cal: DriveCalibration | null = null;
  private closed = false;
  /** The level the drive holds (or is ramping to). */
  level = 0;
  /** The voltage the drive holds by its calibration (nominal before it), V. */
  volts = 0;

  private constructor(
    private current: DriveSettings,
    private readonly simSend: SimSend | null,
  ) {}

  /** The settings in use. */
  get settings(): DriveSettings {
    return this.current;
  }

  /**
   * Takes new values of the settings read on every use (maximum, ramp, meter, note map, bend); the
   * device, channel and kind stay those the drive was opened with.
   *
   * @returns True when the level held was beyond the new maximum and the drive went back to 0 V.
   */
  updateSettings(s: DriveSettings): boolean {
    this.current = {
      ...s,
      kind: this.current.kind,
      dcDeviceId: this.current.dcDeviceId,
      dcChannel: this.current.dcChannel,
      midiPortId: this.current.midiPortId,
      midiChannel: this.current.midiChannel,
      zeroVoltsNote: this.current.zeroVoltsNote,
    };
    this.updateBounds();
    // A maximum lowered below the level held: nothing may stay above it, so the drive goes to 0 V.
    const b = this.bounds();
    if (this.level > b.high || this.level < b.low) {
      this.rest();
      return true;
    }
    return false;
  }

  /**
   * Opens a drive. A DC output opens its device (`setSinkId`); a MIDI drive takes the port given; the
   * simulated drive sends to the simulator.
   */
  static async open(
    settings: DriveSettings,
    deps: { simSend?: SimSend; midiPort?: MidiPortLike | null },
  ): Promise<{ ok: true; drive: Drive } | { ok: false; message: string }> {
    // Only the simulated drive talks to the simulator: a DC or MIDI drive on the simulated input must
    // not move the simulator's control voltage (the run moves it, step by step).
    const d = new Drive(settings, settings.kind === 'sim' ? (deps.simSend ?? null) : null);
    if (settings.kind === 'dc') {
      const r = await openDcOutput(settings.dcDeviceId, settings.dcChannel);
      if (!r.ok) return r;
      d.dc = r.output;
      d.ctx = r.context;
    } else if (settings.kind === 'midi') {
      if (!deps.midiPort) return { ok: false, message: 'Choose a MIDI output for the converter.' };
      d.midiPort = deps.midiPort;
      d.midi = new MidiDrive(deps.midiPort, settings.midiChannel, settings.zeroVoltsNote);
    } else if (settings.kind === 'sim') {
      if (!d.simSend) return { ok: false, message: 'The simulated drive needs the simulated oscillator.' };
      d.simSend(simDriveTrueVolts(0), 0);
    } else return { ok: false, message: 'No drive chosen.' };
    d.updateBounds();
    return { ok: true, drive: d };
  }

  /** The realtime context of a DC output (for device-change handling), or null. */
  get audioContext(): AudioContext | null {
    return this.ctx;
  }

  /** The calibration in use, or null. */
  get calibration(): DriveCalibration | null {
    return this.cal;
  }

  /** Uses a calibration (or none). */
  setCalibration(cal: DriveCalibration | null): void {
    this.cal = cal;
    this.updateBounds();
  }

  /** The nominal gain: volts per level unit before calibration. */
  get nominalGain(): number {
    const s = this.settings;
    return s.kind === 'midi'
      ? 1
      : s.kind === 'sim'
        ? SIM_DRIVE_MODEL.nominalVoltsPerFullScale
        : s.nominalVoltsPerFullScale;
  }

  /**
   * The converter's step for a level, never beyond the bounds: a note rounded to the nearest semitone
   * (or a bend rounded to its 14-bit step) can land above the level asked for, and then the next one
   * down is taken, so the maximum holds for MIDI too.
   */
  private midiStep(level: number, bend: number | null): MidiStep | null {
    const b = this.bounds();
    // One semitone down without bend; one bend step is far below 0.1 mV, so 0.1 mV down with bend.
    const back = bend === null ? VOLTS_PER_SEMITONE : 1e-4;
    let step = planMidiStep(level, this.settings.zeroVoltsNote, bend);
    if (step && step.level > b.high) step = planMidiStep(level - back, this.settings.zeroVoltsNote, bend);
    else if (step && step.level < b.low) step = planMidiStep(level + back, this.settings.zeroVoltsNote, bend);
    return step && step.level <= b.high && step.level >= b.low ? step : null;
  }

  /** Level bounds from the maximum: by the calibration, or by the nominal gain before it. */
  private bounds(): { low: number; high: number } {
    const fs = this.settings.kind === 'midi' ? Infinity : 1;
    if (this.cal) return levelBounds(this.cal, this.settings.maxVolts, fs);
    const hi = Math.min(fs, this.settings.maxVolts / Math.abs(this.nominalGain));
    return { low: 0, high: hi };
  }

  private updateBounds(): void {
    this.dc?.setBounds(this.bounds());
  }

  /**
   * Sends a raw level (the calibration's prompts), clamped to the bounds.
   *
   * @returns The level actually sent.
   */
  setLevel(level: number): number {
    if (this.closed) return this.level;
    // A DC level is a 32-bit sample: the level sent is the rounded one.
    const l = this.dc ? Math.fround(clampLevel(level, this.bounds())) : clampLevel(level, this.bounds());
    const s = this.settings;
    if (this.dc) this.dc.setLevel(l, s.rampSeconds);
    else if (this.midi) {
      const step = this.midiStep(l, null);
      if (!step) return this.level;
      this.midi.setStep(step);
      this.level = step.level;
      this.volts = this.cal ? appliedVoltsAt(this.cal, step.level).volts : step.level;
      return step.level;
    } else if (this.simSend) {
      this.simLevel = l;
      this.simSend(simDriveTrueVolts(l), s.rampSeconds);
    }
    this.level = this.dc ? this.dc.targetLevel : l;
    this.volts = this.cal ? appliedVoltsAt(this.cal, this.level).volts : this.level * this.nominalGain;
    return this.level;
  }

  /** Sets a voltage by the calibration. Refuses targets outside [0, max] and an uncalibrated drive. */
  apply(volts: number): ApplyResult {
    if (this.closed) return { ok: false, message: 'The drive is closed.' };
    const s = this.settings;
    const chk = checkTargetVolts(volts, s.maxVolts);
    if (chk.kind !== 'ok') return { ok: false, message: chk.message };
    const cal = this.cal;
    if (!cal)
      return { ok: false, message: 'Calibrate the drive first: its applied voltage is not known yet.' };
    let level = clampLevel(levelForVolts(cal, volts), this.bounds());
    let note: number | null = null;
    if (this.midi) {
      const step = this.midiStep(level, s.bendRangeSemitones);
      if (!step)
        return {
          ok: false,
          message: `${volts} V cannot be reached within the converter's notes (0–127) and the maximum of ${s.maxVolts} V.`,
        };
      this.midi.setStep(step);
      level = step.level;
      note = step.note;
    } else if (this.dc) {
      // Web Audio parameters are 32-bit floats: the level applied is the one scheduled (rounded, and
      // rounded inwards at a bound).
      level = this.dc.setLevel(Math.fround(level), s.rampSeconds).to;
    } else if (this.simSend) {
      this.simLevel = level;
      this.simSend(simDriveTrueVolts(level), s.rampSeconds);
    }
    this.level = level;
    const a = appliedVoltsAt(cal, level);
    this.volts = a.volts;
    return {
      ok: true,
      applied: {
        volts: a.volts,
        uncertaintyVolts: a.uncertaintyVolts,
        level,
        note,
        trueVolts: this.simSend ? simDriveTrueVolts(level) : null,
      },
    };
  }

  /** Simulated bench only: the voltage the jack really carries now, V. */
  get simTrueVolts(): number | null {
    return this.simSend ? simDriveTrueVolts(this.simLevel) : null;
  }

  /**
   * Back to 0 V: a ramp to rest (DC, simulator), or the converter's 0 V note played and released (MIDI).
   *
   * @param immediate - No ramp (the window is closing).
   */
  rest(immediate = false): void {
    if (this.closed) return;
    const s = this.settings;
    if (this.dc) this.dc.rest(s.rampSeconds, immediate);
    if (this.midi && this.midiPort) {
      this.midi.stop();
      this.midi = new MidiDrive(this.midiPort, s.midiChannel, s.zeroVoltsNote);
    }
    if (this.simSend) {
      this.simLevel = 0;
      this.simSend(simDriveTrueVolts(0), immediate ? 0 : s.rampSeconds);
    }
    this.level = 0;
    this.volts = this.cal ? appliedVoltsAt(this.cal, 0).volts : 0;
  }

  /** Rests and releases the device. */
  async close(immediate = false): Promise<void> {
    if (this.closed) return;
    this.rest(immediate);
    this.midi?.stop();
    this.closed = true;
    const ctx = this.ctx;
    const dc = this.dc;
    if (ctx && dc) {
      if (!immediate)
        await new Promise((r) => setTimeout(r, Math.ceil(this.settings.rampSeconds * 1000) + 30));
      dc.stop();
      await ctx.close().catch(() => undefined);
    }
  }
}

/** Key a calibration is kept under: the device and channel (or port and channel, or the simulator). */
export function driveKey(s: DriveSettings, deviceLabel: string): string {
  if (s.kind === 'dc') return `dc:${deviceLabel || s.dcDeviceId}:${s.dcChannel + 1}`;
  if (s.kind === 'midi') return `midi:${deviceLabel || s.midiPortId}:${s.midiChannel}:${s.zeroVoltsNote}`;
  return s.kind;
}
