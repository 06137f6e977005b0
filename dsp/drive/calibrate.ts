/**
 * Calibration of a drive (a DC-coupled interface output or a MIDI-to-CV converter) against the
 * user's multimeter at the oscillator's input jack: a straight line `volts = gain·level + offset`
 * fitted to three or more readings, a linearity check, a check for AC coupling, and the applied
 * voltage of any level with its standard uncertainty.
 *
 * A *level* is what the drive is told: for a DC output the sample value (full scale = 1), for a MIDI
 * converter the note's nominal voltage at 1 V/oct. The fit is ordinary least squares (e.g. Taylor,
 * An Introduction to Error Analysis, 2nd ed., ch. 8; the standard error of a predicted value from the
 * residual variance, ibid. and NIST/SEMATECH e-Handbook 4.5.2). The meter's specification is taken as
 * a systematic error common to every reading (its % of reading term is a gain error of the meter), so
 * it does not average down and is added to every applied voltage in full (GUM 5.1.2, root sum of
 * squares with the fit's own Type A term).
 */
import type { Volts } from '../math/index.ts';
import { checkMeterSpec, meterUncertainty, type MeterSpec } from './meter.ts';

/** One calibration reading: the level put out and what the meter showed. */
export interface CalibrationReading {
  /** Level sent to the drive (sample value, or nominal volts of a note). */
  readonly level: number;
  /** The meter's reading at the oscillator's input jack, V. */
  readonly readingVolts: Volts;
}

/** A re-reading of one held level some seconds later, to catch a decaying (AC-coupled) output. */
export interface HoldCheck {
  readonly firstVolts: Volts;
  readonly laterVolts: Volts;
  /** Seconds between the two readings. */
  readonly seconds: number;
}

/** A fitted drive: `volts = gainVoltsPerLevel·level + offsetVolts`. Plain JSON, kept per device. */
export interface DriveCalibration {
  readonly gainVoltsPerLevel: number;
  readonly offsetVolts: Volts;
  /** The readings fitted. */
  readonly readings: readonly CalibrationReading[];
  /** Reading minus line, V, in reading order. */
  readonly residualsVolts: readonly Volts[];
  readonly maxAbsResidualVolts: Volts;
  /** √(Σr²/(n − 2)), V (0 with three points on an exact line). */
  readonly residualStdVolts: Volts;
  /** Mean level and Σ(level − mean)² of the readings, for the prediction's standard error. */
  readonly meanLevel: number;
  readonly sxx: number;
  readonly meter: MeterSpec;
}

/** Outcome of {@link fitDriveCalibration}. */
export type DriveCalibrationResult =
  | { readonly kind: 'ok'; readonly calibration: DriveCalibration }
  | { readonly kind: 'too-few-readings'; readonly message: string }
  | { readonly kind: 'no-span'; readonly message: string }
  | {
      readonly kind: 'not-linear';
      /** Index of the reading furthest from the line. */
      readonly worstIndex: number;
      readonly residualVolts: Volts;
      readonly limitVolts: Volts;
      readonly message: string;
    }
  | { readonly kind: 'ac-coupled'; readonly reason: 'no-dc' | 'decaying'; readonly message: string };

/** Fewest readings a calibration takes (two fix a line; the third checks it). */
export const MIN_CALIBRATION_READINGS = 3;

/** A reading may sit this many of its standard uncertainties off the line before the line is refused. */
export const LINEARITY_LIMIT_SIGMAS = 3;

/** Options of {@link fitDriveCalibration}. */
export interface CalibrationFitOptions {
  /** The gain the drive should have, volts per level unit (a DC output's volts at full scale; 1 for MIDI). */
  readonly expectedGain?: number;
  /** A later re-reading of the highest level. */
  readonly holdCheck?: HoldCheck;
}

/** Least-squares line through readings, or null without a span. */
function olsLine(rs: readonly CalibrationReading[]): { gain: number; offset: number } | null {
  const n = rs.length;
  const mx = rs.reduce((a, r) => a + r.level, 0) / n;
  const my = rs.reduce((a, r) => a + r.readingVolts, 0) / n;
  let sxx = 0;
  let sxy = 0;
  for (const r of rs) {
    sxx += (r.level - mx) ** 2;
    sxy += (r.level - mx) * (r.readingVolts - my);
  }
  if (!(sxx > 0)) return null;
  return { gain: sxy / sxx, offset: my - (sxy / sxx) * mx };
}

function fmtMv(v: number): string {
  return `${(v * 1000).toFixed(1)} mV`;
}

/**
 * Fits `volts = gain·level + offset` to the readings and checks the result.
 *
 * - Fewer than three readings: `too-few-readings`. All at one level: `no-span`.
 * - A reading further than {@link LINEARITY_LIMIT_SIGMAS} of its meter uncertainty (at least two counts)
 *   from the line: `not-linear` (a wrong reading, a clipping output, a converter out of range).
 * - A gain under a tenth of `expectedGain`, or readings all within the meter's bound of zero: `ac-coupled`,
 *   `no-dc`. A hold check whose later reading fell toward zero by more than its bound: `ac-coupled`,
 *   `decaying` (the coupling capacitor discharging; docs/facts.md, "The sound card").
 *
 * @param readings - Three or more readings.
 * @param meter - The meter's specification.
 * @param options - Expected gain and hold check.
 * @throws RangeError on non-finite levels or readings.
 * @example fitDriveCalibration([{ level: 0, readingVolts: 0.005 }, { level: 0.1, readingVolts: 1.005 },
 *   { level: 0.2, readingVolts: 2.005 }], BENCH_METER_4_5_DIGIT).kind // 'ok' (gain 10 V, offset 5 mV)
 */
export function fitDriveCalibration(
  readings: readonly CalibrationReading[],
  meter: MeterSpec,
  options: CalibrationFitOptions = {},
): DriveCalibrationResult {
  if (!Array.isArray(readings)) throw new RangeError(`readings must be an array, got ${String(readings)}`);
  checkMeterSpec(meter);
  readings.forEach((r, i) => {
    if (typeof r?.level !== 'number' || !Number.isFinite(r.level))
      throw new RangeError(`readings[${i}].level must be a finite number, got ${r?.level}`);
    if (typeof r.readingVolts !== 'number' || !Number.isFinite(r.readingVolts))
      throw new RangeError(`readings[${i}].readingVolts must be a finite number, got ${r.readingVolts}`);
  });
  const n = readings.length;
  if (n < MIN_CALIBRATION_READINGS)
    return {
      kind: 'too-few-readings',
      message: `A calibration needs at least ${MIN_CALIBRATION_READINGS} readings; ${n} entered.`,
    };
  const mx = readings.reduce((a, r) => a + r.level, 0) / n;
  const my = readings.reduce((a, r) => a + r.readingVolts, 0) / n;
  let sxx = 0;
  let sxy = 0;
  for (const r of readings) {
    sxx += (r.level - mx) ** 2;
    sxy += (r.level - mx) * (r.readingVolts - my);
  }
  if (readings.every((r) => r.level === readings[0].level) || !(sxx > 0))
    return { kind: 'no-span', message: 'All readings were taken at one level: the line needs a span.' };
  const gain = sxy / sxx;
  const offset = my - gain * mx;
  const allNearZero = readings.every(
    (r) => Math.abs(r.readingVolts) <= meterUncertainty(r.readingVolts, meter).boundVolts,
  );
  if (
    allNearZero ||
    (options.expectedGain !== undefined && Math.abs(gain) < 0.1 * Math.abs(options.expectedGain))
  )
    return {
      kind: 'ac-coupled',
      reason: 'no-dc',
      message:
        'The meter saw almost no DC at the jack: the output looks AC-coupled (or is not patched). Use a DC-coupled output.',
    };
  const residuals = readings.map((r) => r.readingVolts - (gain * r.level + offset));
  let worst = 0;
  for (let i = 1; i < n; i++) if (Math.abs(residuals[i]) > Math.abs(residuals[worst])) worst = i;
  const limitOf = (i: number) =>
    Math.max(
      LINEARITY_LIMIT_SIGMAS * meterUncertainty(readings[i].readingVolts, meter).standardVolts,
      2 * meter.resolutionVolts,
    );
  if (Math.abs(residuals[worst]) > limitOf(worst)) {
    // Name the reading that spoils the line: the one whose removal leaves the others on a line, judged
    // by its distance from the line through the others (a high-leverage outlier drags a least-squares
    // line towards itself, so its own residual is not the largest). With three readings any two fit,
    // and the least-squares residual decides.
    let blame = worst;
    let blameDev = residuals[worst];
    if (n >= 4) {
      let best = Infinity;
      for (let i = 0; i < n; i++) {
        const rest = readings.filter((_, j) => j !== i);
        const line = olsLine(rest);
        if (!line) continue;
        const spread = Math.max(
          ...rest.map((r) => Math.abs(r.readingVolts - (line.gain * r.level + line.offset))),
        );
        if (spread < best) {
          best = spread;
          blame = i;
          blameDev = readings[i].readingVolts - (line.gain * readings[i].level + line.offset);
        }
      }
    }
    const limit = limitOf(blame);
    return {
      kind: 'not-linear',
      worstIndex: blame,
      residualVolts: blameDev,
      limitVolts: limit,
      message: `The readings do not fit a line: reading ${blame + 1} (${readings[blame].readingVolts} V) is ${fmtMv(blameDev)} off the line, more than the ${fmtMv(limit)} the meter allows. Check the reading and the patch, then calibrate again.`,
    };
  }
  const hc = options.holdCheck;
  if (hc) {
    const b =
      meterUncertainty(hc.firstVolts, meter).boundVolts + meterUncertainty(hc.laterVolts, meter).boundVolts;
    if (Math.abs(hc.firstVolts) - Math.abs(hc.laterVolts) > b)
      return {
        kind: 'ac-coupled',
        reason: 'decaying',
        message: `The level fell from ${hc.firstVolts} V to ${hc.laterVolts} V in ${hc.seconds} s: the output is AC-coupled and cannot hold a control voltage.`,
      };
  }
  const ss = residuals.reduce((a, r) => a + r * r, 0);
  return {
    kind: 'ok',
    calibration: {
      gainVoltsPerLevel: gain,
      offsetVolts: offset,
      readings: readings.map((r) => ({ level: r.level, readingVolts: r.readingVolts })),
      residualsVolts: residuals,
      maxAbsResidualVolts: Math.abs(residuals[worst]),
      residualStdVolts: n > 2 ? Math.sqrt(ss / (n - 2)) : 0,
      meanLevel: mx,
      sxx,
      meter: { ...meter },
    },
  };
}

/** The voltage a level puts at the jack, with its standard uncertainty. */
export interface AppliedVolts {
  readonly volts: Volts;
  /** √(u_meter(V)² + s²·(1/n + (level − mean)²/Sxx)), V. */
  readonly uncertaintyVolts: Volts;
}

function checkCalibration(cal: DriveCalibration): void {
  if (!cal || !Number.isFinite(cal.gainVoltsPerLevel) || cal.gainVoltsPerLevel === 0)
    throw new RangeError(
      `calibration gainVoltsPerLevel must be finite and non-zero, got ${cal?.gainVoltsPerLevel}`,
    );
  if (!Number.isFinite(cal.offsetVolts))
    throw new RangeError(`calibration offsetVolts must be finite, got ${cal.offsetVolts}`);
}

/**
 * The voltage a level applies, by the calibration, and its standard uncertainty: the meter's
 * specification at that voltage (systematic, in full) and the fit's standard error of prediction.
 *
 * @param cal - A calibration from {@link fitDriveCalibration}.
 * @param level - The level, finite.
 * @example appliedVoltsAt(cal, 0.3).volts // gain·0.3 + offset
 */
export function appliedVoltsAt(cal: DriveCalibration, level: number): AppliedVolts {
  checkCalibration(cal);
  if (typeof level !== 'number' || !Number.isFinite(level))
    throw new RangeError(`level must be a finite number, got ${level}`);
  const volts = cal.gainVoltsPerLevel * level + cal.offsetVolts;
  const n = cal.readings.length;
  const sPred =
    cal.residualStdVolts *
    Math.sqrt(1 / Math.max(1, n) + (cal.sxx > 0 ? (level - cal.meanLevel) ** 2 / cal.sxx : 0));
  const uMeter = meterUncertainty(volts, cal.meter).standardVolts;
  return { volts, uncertaintyVolts: Math.hypot(uMeter, sPred) };
}

/**
 * The level that applies a voltage, by the calibration: `(volts − offset)/gain`.
 *
 * @param cal - A calibration.
 * @param volts - Wanted voltage, V, finite.
 * @example levelForVolts(cal, 2) // (2 − offset)/gain
 */
export function levelForVolts(cal: DriveCalibration, volts: Volts): number {
  checkCalibration(cal);
  if (typeof volts !== 'number' || !Number.isFinite(volts))
    throw new RangeError(`volts must be a finite number, got ${volts}`);
  return (volts - cal.offsetVolts) / cal.gainVoltsPerLevel;
}

/**
 * The next level of a guided calibration: aims at `targetsVolts[k]` for the k-th reading, using the
 * line through the readings so far (the nominal gain and zero offset until there are two), so that a
 * drive whose real gain is higher than its nominal one is caught before it reaches the top target.
 *
 * @param targetsVolts - Voltages wanted at the jack, in order (start with 0 V).
 * @param readings - Readings taken so far.
 * @param nominalGain - Volts per level unit assumed before any reading (non-zero).
 * @returns The level for the next reading, or null when every target has its reading.
 * @example nextCalibrationLevel([0, 1, 2], [], 10) // 0
 */
export function nextCalibrationLevel(
  targetsVolts: readonly Volts[],
  readings: readonly CalibrationReading[],
  nominalGain: number,
): number | null {
  if (!Number.isFinite(nominalGain) || nominalGain === 0)
    throw new RangeError(`nominalGain must be finite and non-zero, got ${nominalGain}`);
  const k = readings.length;
  if (k >= targetsVolts.length) return null;
  const target = targetsVolts[k];
  let gain = nominalGain;
  let offset = 0;
  if (k === 1) offset = readings[0].readingVolts - nominalGain * readings[0].level;
  if (k >= 2) {
    const mx = readings.reduce((a, r) => a + r.level, 0) / k;
    const my = readings.reduce((a, r) => a + r.readingVolts, 0) / k;
    let sxx = 0;
    let sxy = 0;
    for (const r of readings) {
      sxx += (r.level - mx) ** 2;
      sxy += (r.level - mx) * (r.readingVolts - my);
    }
    // A line with no usable gain (a flat AC-coupled output) keeps the nominal gain: the fit will refuse it.
    if (sxx > 0 && Math.abs(sxy / sxx) >= 0.1 * Math.abs(nominalGain)) gain = sxy / sxx;
    offset = my - gain * mx;
  }
  return (target - offset) / gain;
}
