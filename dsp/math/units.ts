/**
 * Unit types used across Spanmeter's signal processing and calibration code.
 *
 * They are plain `number` aliases: they document intent in signatures and names
 * (`hzToCents`, `voltsToIdealHz`) without any run-time cost.
 */

/** Frequency in hertz (cycles per second). */
export type Hertz = number;
/** Pitch interval in cents: 1/1200 of an octave, 1/100 of an equal-tempered semitone (Ellis, 1885). */
export type Cents = number;
/** Electric potential in volts. */
export type Volts = number;
/** Time in seconds. */
export type Seconds = number;
/** Level in decibels relative to full scale (0 dBFS is a sample value of ±1). */
export type Decibels = number;
/** Temperature in kelvin. */
export type Kelvin = number;
/** Temperature in degrees Celsius. */
export type Celsius = number;
/** Resistance in ohms. */
export type Ohms = number;
/** A dimensionless ratio expressed in parts per million. */
export type Ppm = number;
