/**
 * A multimeter's accuracy specification and the standard uncertainty of one of its readings.
 *
 * Sources: the usual specification form ±(% of reading + counts) (docs/facts.md, "Uncertainty"); a bound ±a with no better knowledge is a rectangular distribution, u = a/√3 (JCGM
 * 100:2008, the GUM, 4.3.7); the last digit's resolution adds a rectangular half-count (GUM F.2.2.1).
 */
import type { Volts } from '../math/index.ts';

/** A DC-volts accuracy specification, ±(percentOfReading % + counts × resolution). */
export interface MeterSpec {
  /** Percent of reading, %, in [0, 10]. */
  readonly percentOfReading: number;
  /** Counts of the last digit, in [0, 1000]. */
  readonly counts: number;
  /** Value of one count on the range used, V, in (0, 1]. */
  readonly resolutionVolts: Volts;
}

/** A 4½-digit bench meter on its 20 V range: ±(0.05 % + 3 counts), 1 mV counts (docs/facts.md). */
export const BENCH_METER_4_5_DIGIT: MeterSpec = Object.freeze({
  percentOfReading: 0.05,
  counts: 3,
  resolutionVolts: 0.001,
});

/** What one reading is worth. */
export interface MeterUncertainty {
  /** The specification's bound, ±a, V. */
  readonly boundVolts: Volts;
  /** Standard uncertainty: √((a/√3)² + (res/2/√3)²), V (GUM 4.3.7 and F.2.2.1). */
  readonly standardVolts: Volts;
}

/**
 * Throws when a meter specification is out of range.
 *
 * @param spec - The specification.
 * @example checkMeterSpec({ percentOfReading: 0.05, counts: 3, resolutionVolts: 0.0001 }) // no throw
 */
export function checkMeterSpec(spec: MeterSpec): void {
  const p = spec?.percentOfReading;
  if (typeof p !== 'number' || !Number.isFinite(p) || p < 0 || p > 10)
    throw new RangeError(`meter percentOfReading must be in [0, 10] %, got ${p}`);
  const c = spec.counts;
  if (typeof c !== 'number' || !Number.isFinite(c) || c < 0 || c > 1000)
    throw new RangeError(`meter counts must be in [0, 1000], got ${c}`);
  const r = spec.resolutionVolts;
  if (typeof r !== 'number' || !Number.isFinite(r) || r <= 0 || r > 1)
    throw new RangeError(`meter resolutionVolts must be in (0, 1] V, got ${r}`);
}

/**
 * The uncertainty of one DC reading under a meter specification.
 *
 * @param readingVolts - The reading, V, finite.
 * @param spec - The meter's specification.
 * @returns The bound and the standard uncertainty, V.
 * @example meterUncertainty(1, { percentOfReading: 0.05, counts: 3, resolutionVolts: 0.0001 }).standardVolts
 *   // 0.000463 (docs/facts.md worked example: ±0.8 mV, u = 0.46 mV)
 */
export function meterUncertainty(readingVolts: Volts, spec: MeterSpec): MeterUncertainty {
  if (typeof readingVolts !== 'number' || !Number.isFinite(readingVolts))
    throw new RangeError(`readingVolts must be a finite number, got ${readingVolts}`);
  checkMeterSpec(spec);
  const a = (spec.percentOfReading / 100) * Math.abs(readingVolts) + spec.counts * spec.resolutionVolts;
  const uSpec = a / Math.sqrt(3);
  const uRes = spec.resolutionVolts / 2 / Math.sqrt(3);
  return { boundVolts: a, standardVolts: Math.hypot(uSpec, uRes) };
}

/**
 * Rounds a voltage to the meter's resolution, as its display would show it.
 *
 * @param volts - V, finite.
 * @param spec - The meter's specification.
 * @example roundToMeter(1.23456, { percentOfReading: 0.05, counts: 3, resolutionVolts: 0.001 }) // 1.235
 */
export function roundToMeter(volts: Volts, spec: MeterSpec): Volts {
  checkMeterSpec(spec);
  const n = Math.round(volts / spec.resolutionVolts);
  // Keep as many decimals as the resolution has, so 0.1 mV steps print cleanly.
  const decimals = Math.max(0, Math.ceil(-Math.log10(spec.resolutionVolts) - 1e-9));
  return Number((n * spec.resolutionVolts).toFixed(decimals)) + 0;
}
