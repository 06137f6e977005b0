/**
 * The simulated bench's drive and meter: a DC output with a modelled gain and offset error patched
 * into the simulated oscillator's control input, and a meter with a stated accuracy that answers the
 * calibration's prompts. Invented figures for the demo, within what real interfaces and meters show
 * (docs/facts.md: volts per full scale differ between interfaces; a 4½-digit meter's specification).
 */
import type { Volts } from '../math/index.ts';
import { roundToMeter, type MeterSpec } from './meter.ts';

/** The simulated DC output: what it claims, and what it really does. */
export interface SimDriveModel {
  /** Volts at full scale the output is sold as, V. */
  readonly nominalVoltsPerFullScale: Volts;
  /** Volts at full scale it really gives at the jack, V. */
  readonly trueVoltsPerFullScale: Volts;
  /** Its real offset at the jack, V. */
  readonly trueOffsetVolts: Volts;
}

/** The simulated interface output: sold as 10 V at full scale, really 9.87 V, with +7.5 mV offset. */
export const SIM_DRIVE_MODEL: SimDriveModel = Object.freeze({
  nominalVoltsPerFullScale: 10,
  trueVoltsPerFullScale: 9.87,
  trueOffsetVolts: 0.0075,
});

/** The simulated meter's stated accuracy: ±(0.05 % + 3 counts), 0.1 mV counts. */
export const SIM_METER_SPEC: MeterSpec = Object.freeze({
  percentOfReading: 0.05,
  counts: 3,
  resolutionVolts: 0.0001,
});

/** The simulated meter's own (unknown to the app) error: +0.02 % of reading, +0.1 mV; within its spec. */
const SIM_METER_GAIN_ERROR = 0.0002;
const SIM_METER_OFFSET_VOLTS = 0.0001;

/**
 * The voltage the simulated output really puts at the jack for a level (sample value).
 *
 * @example simDriveTrueVolts(0.5) // 4.9425
 */
export function simDriveTrueVolts(level: number, model: SimDriveModel = SIM_DRIVE_MODEL): Volts {
  if (!Number.isFinite(level)) throw new RangeError(`level must be finite, got ${level}`);
  const l = Math.max(-1, Math.min(1, level));
  return model.trueVoltsPerFullScale * l + model.trueOffsetVolts;
}

/**
 * What the simulated meter shows for a true voltage: its own small gain and offset error, rounded to
 * its resolution. Always within {@link SIM_METER_SPEC}.
 *
 * @example simMeterReading(1) // 1.0003
 */
export function simMeterReading(trueVolts: Volts): Volts {
  if (!Number.isFinite(trueVolts)) throw new RangeError(`trueVolts must be finite, got ${trueVolts}`);
  return roundToMeter(trueVolts * (1 + SIM_METER_GAIN_ERROR) + SIM_METER_OFFSET_VOLTS, SIM_METER_SPEC);
}
