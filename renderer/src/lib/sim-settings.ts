/**
 * The simulated oscillator's controls: a demo unit from `dsp/sim/simulate.ts` with its errors exposed as
 * knobs (scale error, reset time, warm-up drift) and the recording chain's noise and hum.
 */
import { demoUnits, findDemoUnit, type OscillatorOptions } from '../../../dsp/sim/index.ts';

/** What the simulator panel controls. */
export interface SimSettings {
  /** Demo unit id (`dsp/sim/simulate.ts` demoUnits). */
  readonly unitId: string;
  /** Scale error, cents per octave: `1200·(s − 1)`. */
  readonly scaleErrorCentsPerOctave: number;
  /** Reset time of the core, µs. */
  readonly resetMicroseconds: number;
  /** Warm-up offset at power-on, cents (0 = already warm). */
  readonly warmupCents: number;
  /** Interface noise, SNR in dB, or null for none. */
  readonly snrDb: number | null;
  /** Mains hum relative to the signal, dB, or null for none. */
  readonly humDb: number | null;
  /** Sample rate the simulator renders at, Hz. */
  readonly sampleRateHz: number;
}

/** The unit a newcomer meets first: the one with a scale error to trim. */
export const DEFAULT_SIM_UNIT = 'ol3-0417';

/**
 * Controls set from a demo unit's own parameters, with a quiet interface (70 dB SNR, no hum).
 *
 * @example simSettingsForUnit('ol3-0417').scaleErrorCentsPerOctave // 4.2 (to rounding)
 */
export function simSettingsForUnit(unitId: string, sampleRateHz = 48_000): SimSettings {
  const unit = findDemoUnit(unitId) ?? demoUnits[0];
  const o = unit.options;
  return {
    unitId: unit.id,
    scaleErrorCentsPerOctave: 1200 * ((o.scaleOctPerVolt ?? 1) - 1),
    resetMicroseconds: (o.resetSeconds ?? 0) * 1e6,
    warmupCents: o.warmupCents ?? 0,
    snrDb: 70,
    humDb: null,
    sampleRateHz,
  };
}

/**
 * The oscillator options the simulator runs with: the unit's parameters, overridden by the controls.
 *
 * @example simOptions(simSettingsForUnit('ol3-0412')).hz0 // 32.71
 */
export function simOptions(s: SimSettings): OscillatorOptions {
  const unit = findDemoUnit(s.unitId) ?? demoUnits[0];
  return {
    ...unit.options,
    scaleOctPerVolt: 1 + s.scaleErrorCentsPerOctave / 1200,
    resetSeconds: s.resetMicroseconds * 1e-6,
    warmupCents: s.warmupCents,
    snrDb: s.snrDb ?? Infinity,
    humDb: s.humDb ?? -Infinity,
    sampleRateHz: s.sampleRateHz,
    seed: 7,
  };
}
