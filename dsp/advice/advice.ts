/**
 * Trim advice: which trimmer to turn, which way, by how much, and what to measure next, in plain
 * words and in numbers, from a tracking fit and its bend analysis.
 *
 * The order follows common practice (docs/facts.md, "How technicians calibrate"): set the scale from an
 * interval in the low-middle range with the HF trim left alone, then trim HF on an octave near
 * 2–5 kHz, repeat scale and HF until both hold, and set the offset (tuning) last, because scale and
 * offset interact when the converter's pivot is not at 0 V.
 */
import {
  derivedBudget,
  lineBudgets,
  stepBudget,
  type BudgetOptions,
  type BudgetStep,
  type UncertaintyBudget,
} from '../model/index.ts';
import { formatUncertainty, formatVolts } from '../format/index.ts';
import { nearestPreferred, formatOhms, type PreferredValue } from '../converter/index.ts';
import { predictedHz, type BendAnalysis, type TrackingFit, type TrackingFitOk } from '../model/index.ts';
import {
  checkPlausibility,
  hfCents,
  hfSensitivities,
  lowEndCents,
  modelHz,
  predictionSensitivities,
  type CalibrationModelOk,
  type ModelRefusal,
} from '../model/index.ts';
import { nearestNote, A4_HZ } from '../math/index.ts';
import { centsToMillivolts, voltsPerOctaveAtBase } from '../converter/index.ts';
import { budgetSourceName, judgeTolerance, type ToleranceResult } from '../model/index.ts';
import type { Celsius, Cents, Hertz, Ohms, Volts } from '../math/index.ts';

const CENTS_PER_OCTAVE = 1200;

/**
 * The usual caution shown with every piece of trim advice (common practice): Spanmeter never asks for
 * work on the mains side, and the unit's own documentation comes first.
 */
export const TRIM_CAUTION =
  'Trim with the unit powered the way its documentation describes, using an insulated trimming tool, ' +
  'and keep clear of power connectors and any mains-powered part: work on the mains side is for qualified ' +
  'people and is never part of this calibration. Never connect a power rail to the sound card input.';

/** The trimmer an advice item is about; `none` for observations no trimmer corrects. */
export type Trimmer = 'scale' | 'offset' | 'hf' | 'none';

/**
 * - `adjust`: turn the trimmer as described.
 * - `within-tolerance`: leave it; the error is within tolerance.
 * - `unresolved`: the readings cannot decide yet; measure as described first.
 * - `note`: an observation that needs no trimming.
 */
export type AdviceStatus = 'adjust' | 'within-tolerance' | 'unresolved' | 'note';

/**
 * Which way to turn: `widen`/`narrow` the span (scale), `raise`/`lower` the pitch (offset), add
 * (`more-compensation`) or reduce (`less-compensation`) HF compensation, or `none`.
 */
export type AdviceDirection =
  'widen' | 'narrow' | 'raise' | 'lower' | 'more-compensation' | 'less-compensation' | 'none';

/** A resistor value that would correct the scale, with the nearest preferred values. */
export interface ResistorChange {
  /** Which resistor of the {@link InputNetwork}. */
  readonly part: 'series' | 'shunt' | 'input' | 'feedback';
  /** Present value, Ω. */
  readonly fromOhms: Ohms;
  /** Exact value that makes the scale 1 octave per volt, Ω. */
  readonly toOhms: Ohms;
  /** Nearest E24 value, and the scale error it would leave, cents per octave. */
  readonly e24: PreferredValue & { readonly resultingScaleErrorCentsPerOctave: Cents };
  /** Nearest E96 value, and the scale error it would leave, cents per octave. */
  readonly e96: PreferredValue & { readonly resultingScaleErrorCentsPerOctave: Cents };
  /**
   * The E96 value's outcome with the part's tolerance: the scale errors at `ohms·(1 ∓ tolerance)`, cents per
   * octave, and whether even the worse of them beats leaving the part alone. Absent from the straight-line advice.
   */
  readonly withTolerance?: {
    readonly tolerancePercent: number;
    readonly lowCentsPerOctave: Cents;
    readonly highCentsPerOctave: Cents;
    readonly betterThanNoChange: boolean;
  };
}

/** One piece of advice. */
export interface AdviceItem {
  readonly trimmer: Trimmer;
  readonly status: AdviceStatus;
  readonly direction: AdviceDirection;
  /**
   * The error addressed, signed, cents: per octave for the scale (negative = octaves narrow), at the
   * top step for HF, at the reference voltage for the offset (positive = sharp), at the end step for a
   * low-end note. Null when nothing was measured to give it.
   */
  readonly errorCents: Cents | null;
  /** Scale only: the change of the converter's gain, percent, `(1/s − 1)·100`; else null. */
  readonly gainChangePercent: number | null;
  /** Offset only: the voltage change at the converter's base, mV (signed, from VT·ln2 per octave); else null. */
  readonly millivoltsAtBase: number | null;
  /** Offset only: the same change expressed at a 1 V/oct control input, mV; else null. */
  readonly millivoltsAtInput: number | null;
  /** Scale only, when an input network was described: resistor values that would correct it. */
  readonly resistors: readonly ResistorChange[] | null;
  /** Plain practitioner-facing English. */
  readonly text: string;
  /** Expanded uncertainty (k from the budget) of `errorCents`, cents; null or absent when not computed. */
  readonly uncertaintyCents?: Cents | null;
  /** The reading to trim to, when the advice names one; null or absent otherwise. */
  readonly target?: TrimTarget | null;
  /** For a note about a suspect step: its index and the voltage its pitch corresponds to. */
  readonly suspect?: { readonly index: number; readonly volts: Volts; readonly likelyVolts: Volts } | null;
}

/**
 * The reading a trim aims for: the interval from `fromVolts` to `volts` should read `intervalCents`, i.e. the
 * step at `volts` should read `hz` while the step at `fromVolts` reads `fromHz` (for the offset, `fromVolts`
 * equals `volts` and the target is the pitch itself).
 */
export interface TrimTarget {
  readonly volts: Volts;
  readonly hz: Hertz;
  readonly nowHz: Hertz;
  readonly fromVolts: Volts;
  readonly fromHz: Hertz;
  readonly intervalCents: Cents;
  readonly nowIntervalCents: Cents;
  /**
   * Set when the target follows a reading taken just before the trim (the HF trim): the interval should then read
   * `ratio` times the interval from `fromVolts` to `volts` here, as read before turning, plus `plusCents`. This
   * keeps the trim clear of whatever error the trims before it left (for HF: the top octave as wide as the mean
   * octave of the scale interval, so a scale trim that landed off does not move the HF setting).
   * `intervalCents` is the same target when the trims before it landed exactly. Null or absent otherwise.
   */
  readonly relativeTo?: {
    readonly fromVolts: Volts;
    readonly volts: Volts;
    readonly ratio: number;
    readonly plusCents: Cents;
  } | null;
}

/** Trim advice for one measurement pass. */
export interface TrimAdvice {
  /** Items in working order: scale, HF, offset, then notes. */
  readonly items: readonly AdviceItem[];
  /** The next measurement to make, in words. */
  readonly next: string;
  /** True when scale, HF and offset all checked out within tolerance. */
  readonly allWithinTolerance: boolean;
  /** {@link TRIM_CAUTION}. */
  readonly caution: string;
}

/**
 * The network from the control input to the expo transistor's base that the scale trimmer acts on.
 *
 * `divider` — a series resistor into the base node and a shunt to ground (gain `Rsh/(Rs + Rsh)`):
 * ```
 *   CV in ──[ Rs ]──┬──► base of the expo pair
 *                   │
 *                 [ Rsh ]   (everything from the node to ground or to other low-impedance
 *                   │        sources, in parallel; base current neglected)
 *                  GND
 * ```
 * `inverting-summer` — an op-amp summing node at virtual ground (gain magnitude `Rf/Rin`), followed
 * by a fixed divider that does not change (the sign inversion is undone elsewhere in the converter):
 * ```
 *                       ┌────[ Rf ]────┐
 *                       │              │
 *   CV in ──[ Rin ]─────┴──(−)╲        │
 *                             op-amp ──┴──► fixed divider ──► base
 *                   GND ───(+)╱
 * ```
 */
export type InputNetwork =
  | { readonly topology: 'divider'; readonly seriesOhms: Ohms; readonly shuntOhms: Ohms }
  | { readonly topology: 'inverting-summer'; readonly inputOhms: Ohms; readonly feedbackOhms: Ohms };

function requirePositive(name: string, value: number): void {
  if (!Number.isFinite(value) || value <= 0) {
    throw new RangeError(`${name} must be a finite number greater than 0, got ${value}`);
  }
}

function validateNetwork(network: InputNetwork): void {
  if (network.topology === 'divider') {
    requirePositive('network.seriesOhms', network.seriesOhms);
    requirePositive('network.shuntOhms', network.shuntOhms);
  } else if (network.topology === 'inverting-summer') {
    requirePositive('network.inputOhms', network.inputOhms);
    requirePositive('network.feedbackOhms', network.feedbackOhms);
  } else {
    throw new RangeError(
      `network.topology must be 'divider' or 'inverting-summer', got ${String((network as { topology: unknown }).topology)}`,
    );
  }
}

/**
 * Voltage gain of the input network (magnitude): `Rsh/(Rs + Rsh)` for a divider (Ohm's law, the
 * unloaded divider) and `Rf/Rin` for an inverting summer (ideal op-amp). Its reciprocal is the
 * attenuation: 100 kΩ over about 4 kΩ is about 25:1 (common practice, no source).
 *
 * @param network - The network; every resistance finite and > 0.
 * @returns Dimensionless gain, > 0.
 * @throws RangeError naming an invalid resistance.
 * @example inputNetworkGain({ topology: 'divider', seriesOhms: 100e3, shuntOhms: 4e3 }) // 0.038 46… (26:1)
 */
export function inputNetworkGain(network: InputNetwork): number {
  validateNetwork(network);
  return network.topology === 'divider'
    ? network.shuntOhms / (network.seriesOhms + network.shuntOhms)
    : network.feedbackOhms / network.inputOhms;
}

/**
 * Resistor values that make a measured scale exactly 1 octave per volt. The gain must be multiplied by
 * `g = 1/s`; for a divider with gain G this gives `Rs' = Rsh/(gG) − Rsh` or `Rsh' = gG·Rs/(1 − gG)`,
 * for an inverting summer `Rin' = Rin/g` or `Rf' = Rf·g` (derived). Each comes with the nearest E24
 * and E96 values (IEC 60063) and the scale error each would leave, `1200·(s·G'/G − 1)`.
 *
 * @param network - The network now fitted.
 * @param octavesPerVolt - Measured scale s, octaves per volt, finite and > 0.
 * @returns One change per resistor of the network (a change that cannot be realised, such as a
 *   negative resistance, is left out).
 * @throws RangeError for an invalid network or scale.
 * @example
 * scaleCorrectionResistors({ topology: 'divider', seriesOhms: 100e3, shuntOhms: 1.8e3 }, 0.997333)
 * // [{ part: 'series', toOhms: 99 728…, … }, { part: 'shunt', toOhms: 1804.9…, … }]
 */
export function scaleCorrectionResistors(network: InputNetwork, octavesPerVolt: number): ResistorChange[] {
  validateNetwork(network);
  requirePositive('octavesPerVolt', octavesPerVolt);
  const g = 1 / octavesPerVolt;
  const gain = inputNetworkGain(network);
  const target = g * gain;
  const parts: { part: ResistorChange['part']; from: number; to: number; gainWith: (r: number) => number }[] =
    [];
  if (network.topology === 'divider') {
    const { seriesOhms: rs, shuntOhms: rsh } = network;
    if (target < 1) {
      parts.push({ part: 'series', from: rs, to: rsh / target - rsh, gainWith: (r) => rsh / (r + rsh) });
      parts.push({
        part: 'shunt',
        from: rsh,
        to: (target * rs) / (1 - target),
        gainWith: (r) => r / (rs + r),
      });
    }
  } else {
    const { inputOhms: rin, feedbackOhms: rf } = network;
    parts.push({ part: 'input', from: rin, to: rin / g, gainWith: (r) => rf / r });
    parts.push({ part: 'feedback', from: rf, to: rf * g, gainWith: (r) => r / rin });
  }
  return parts
    .filter((p) => Number.isFinite(p.to) && p.to > 0)
    .map((p) => {
      const withValue = (v: PreferredValue) => ({
        ...v,
        resultingScaleErrorCentsPerOctave:
          CENTS_PER_OCTAVE * ((octavesPerVolt * p.gainWith(v.ohms)) / gain - 1),
      });
      return {
        part: p.part,
        fromOhms: p.from,
        toOhms: p.to,
        e24: withValue(nearestPreferred(p.to, 'E24')),
        e96: withValue(nearestPreferred(p.to, 'E96')),
      };
    });
}

/** Result of {@link scalePairIntervalError}. */
export interface ScalePairResult {
  /** Measured interval, `1200·log2(hzHigh/hzLow)`, cents. */
  readonly intervalCents: Cents;
  /** Interval 1 V/oct asks for, `1200·(voltsHigh − voltsLow)`, cents. */
  readonly expectedCents: Cents;
  /** Measured minus expected, cents (negative = narrow). */
  readonly errorCents: Cents;
  /** The error per octave, cents. */
  readonly errorCentsPerOctave: Cents;
  /** Scale s, octaves per volt. */
  readonly octavesPerVolt: number;
  /** Gain change that corrects it, percent, `(1/s − 1)·100`. */
  readonly gainChangePercent: number;
  /** `widen` when narrow, `narrow` when wide, `none` within tolerance. */
  readonly direction: 'widen' | 'narrow' | 'none';
  readonly withinTolerance: boolean;
  /** Plain-English summary. */
  readonly text: string;
}

function fmtCents(c: number): string {
  const a = Math.abs(c);
  return a < 1 ? a.toFixed(2) : a.toFixed(1);
}
function fmtSigned(c: number): string {
  return `${c < 0 ? '−' : '+'}${fmtCents(c)}`;
}
function fmtHz(hz: number): string {
  return hz >= 1000 ? hz.toFixed(1) : hz.toFixed(2);
}
function fmtV(v: number): string {
  return formatVolts(v);
}
function fmtMv(mv: number): string {
  return `${Math.abs(mv).toPrecision(2)} mV`;
}
function fmtPct(p: number): string {
  return `${Math.abs(p).toPrecision(2)} %`;
}

/**
 * The scale pair check: the interval between two control voltages against what 1 V/oct asks
 * for. Setting the scale from an interval, never from absolute pitch, is common practice (docs/facts.md).
 *
 * @param hzLow - Pitch at `voltsLow`, Hz, > 0.
 * @param hzHigh - Pitch at `voltsHigh`, Hz, > 0.
 * @param voltsLow - Lower control voltage, V, finite.
 * @param voltsHigh - Higher control voltage, V, finite and greater than `voltsLow`.
 * @param toleranceCents - Allowed |error| over the interval, cents, ≥ 0. Default 1.
 * @throws RangeError for invalid frequencies, voltages or tolerance.
 * @example
 * scalePairIntervalError(130, 519.04, 1, 3)
 * // { intervalCents: 2396.80…, errorCents: −3.199…, errorCentsPerOctave: −1.599…, direction: 'widen', … }
 */
export function scalePairIntervalError(
  hzLow: Hertz,
  hzHigh: Hertz,
  voltsLow: Volts,
  voltsHigh: Volts,
  toleranceCents: Cents = 1,
): ScalePairResult {
  requirePositive('hzLow', hzLow);
  requirePositive('hzHigh', hzHigh);
  if (!Number.isFinite(voltsLow)) throw new RangeError(`voltsLow must be a finite number, got ${voltsLow}`);
  if (!Number.isFinite(voltsHigh) || !(voltsHigh > voltsLow)) {
    throw new RangeError(
      `voltsHigh must be a finite number greater than voltsLow (${voltsLow}), got ${voltsHigh}`,
    );
  }
  if (!Number.isFinite(toleranceCents) || toleranceCents < 0) {
    throw new RangeError(`toleranceCents must be a finite number at least 0, got ${toleranceCents}`);
  }
  const span = voltsHigh - voltsLow;
  const intervalCents = CENTS_PER_OCTAVE * Math.log2(hzHigh / hzLow);
  const expectedCents = CENTS_PER_OCTAVE * span;
  const errorCents = intervalCents - expectedCents;
  const octavesPerVolt = intervalCents / CENTS_PER_OCTAVE / span;
  const withinTolerance = Math.abs(errorCents) <= toleranceCents;
  const direction = withinTolerance ? 'none' : errorCents < 0 ? 'widen' : 'narrow';
  const head = `The interval from ${fmtV(voltsLow)} to ${fmtV(voltsHigh)} is ${intervalCents.toFixed(1)} cents`;
  const text = withinTolerance
    ? `${head}, within ±${toleranceCents} cent of ${expectedCents.toFixed(1)}: leave the scale trimmer.`
    : `${head}, ${fmtCents(errorCents)} cents ${errorCents < 0 ? 'narrow' : 'wide'} of ${expectedCents.toFixed(1)} ` +
      `(${fmtCents(errorCents / span)} cents per octave): turn the scale trimmer to ${direction} the span.`;
  return {
    intervalCents,
    expectedCents,
    errorCents,
    errorCentsPerOctave: errorCents / span,
    octavesPerVolt,
    gainChangePercent: (1 / octavesPerVolt - 1) * 100,
    direction,
    withinTolerance,
    text,
  };
}

/** Input to {@link adviseTrim}. */
export interface TrimAdviceInput {
  /** The tracking fit over the measured steps. */
  readonly fit: TrackingFit;
  /** The bend analysis of the same steps; when ok, the scale comes from its trusted middle. */
  readonly bends?: BendAnalysis;
  /** Allowed error, cents, ≥ 0: accumulated over the measured span for the scale, at the top step for HF, at the reference voltage for the offset. Default 1. */
  readonly toleranceCents?: Cents;
  /** The pitch the unit should play at a voltage. Default: the nearest 12-TET note at the lowest fitted voltage. */
  readonly offsetTarget?: { readonly volts: Volts; readonly hz: Hertz };
  /** Tuning reference for the default offset target, Hz, > 0. Default 440 (ISO 16:1975). */
  readonly a4Hz?: Hertz;
  /** Converter temperature for the base-voltage figures, °C. Default 25. */
  readonly tempC?: Celsius;
  /** The input network, for resistor values that would correct the scale. */
  readonly network?: InputNetwork;
}

/** Frequency above which high-frequency error shows clearly (docs/facts.md: trim HF near 2–5 kHz). */
const HF_CHECK_HZ: Hertz = 2000;

/**
 * Below this top step, Hz, a unit may never play in the range where HF error shows (an LFO core): more than
 * three octaves under {@link HF_CHECK_HZ}. Our choice, no source.
 */
const LFO_TOP_HZ: Hertz = 200;

/**
 * The HF item when no step reaches {@link HF_CHECK_HZ}. A unit whose steps all lie far below it may be an LFO
 * core that never plays in the audio range, where there is no HF error to trim: say so rather than send it
 * looking for a step it cannot play.
 */
function hfUnresolvedText(topHz: Hertz): string {
  const lead = `The highest step is ${fmtHz(topHz)} Hz: HF error shows near 2–5 kHz`;
  return topHz < LFO_TOP_HZ
    ? `${lead}. If the oscillator plays that high, add a step there before judging the HF trim; one that never ` +
        'does (an LFO core) has no HF error to trim.'
    : `${lead}, so add a step there before judging the HF trim.`;
}

function item(partial: Partial<AdviceItem> & Pick<AdviceItem, 'trimmer' | 'status' | 'text'>): AdviceItem {
  return {
    direction: 'none',
    errorCents: null,
    gainChangePercent: null,
    millivoltsAtBase: null,
    millivoltsAtInput: null,
    resistors: null,
    ...partial,
  };
}

function partName(part: ResistorChange['part']): string {
  return { series: 'Rs', shunt: 'Rsh', input: 'Rin', feedback: 'Rf' }[part];
}

/** Checks the inputs both advisers share; returns the tuning reference (Hz) and VT·ln2 at the base (V). */
function checkAdviceInput(input: {
  readonly a4Hz?: Hertz;
  readonly tempC?: Celsius;
  readonly offsetTarget?: { readonly volts: Volts; readonly hz: Hertz };
  readonly network?: InputNetwork;
}): { a4Hz: Hertz; vBase: number } {
  const a4Hz = input.a4Hz ?? A4_HZ;
  requirePositive('a4Hz', a4Hz);
  const vBase = voltsPerOctaveAtBase(input.tempC ?? 25);
  if (input.offsetTarget !== undefined) {
    if (!Number.isFinite(input.offsetTarget.volts)) {
      throw new RangeError(`offsetTarget.volts must be a finite number, got ${input.offsetTarget.volts}`);
    }
    requirePositive('offsetTarget.hz', input.offsetTarget.hz);
  }
  if (input.network !== undefined) validateNetwork(input.network);
  return { a4Hz, vBase };
}

/** The offset target as a person reads it: the note name with its pitch when it is a 12-TET note, else the pitch. */
function targetLabel(targetHz: Hertz, a4Hz: Hertz): string {
  const targetNote = nearestNote(targetHz, a4Hz);
  return Math.abs(targetNote.cents) < 0.05
    ? `${targetNote.name} (${fmtHz(targetHz)} Hz)`
    : `${fmtHz(targetHz)} Hz`;
}

/**
 * The reading to trim to: the step at `volts` (now `nowHz`) should read the interval `intervalCents` above
 * the step at `fromVolts` (reading `fromHz`), i.e. `fromHz·2^(intervalCents/1200)`.
 */
function trimTarget(
  fromVolts: Volts,
  fromHz: Hertz,
  volts: Volts,
  nowHz: Hertz,
  intervalCents: Cents,
  nowIntervalCents: Cents,
): TrimTarget {
  return {
    volts,
    hz: fromHz * Math.pow(2, intervalCents / CENTS_PER_OCTAVE),
    nowHz,
    fromVolts,
    fromHz,
    intervalCents,
    nowIntervalCents,
  };
}

/**
 * An offset item that asks for a trim (`offErr` > 0, sharp: lower the pitch): `lead`, then the amount in
 * millivolts at the converter's base (VT·ln2 per octave, `vBase` volts) and at a 1 V/oct input, then `tail`.
 */
function offsetAdjustItem(
  offErr: Cents,
  vBase: number,
  extra: Pick<AdviceItem, 'uncertaintyCents' | 'target'>,
  lead: string,
  tail: string,
): AdviceItem {
  const mvBase = centsToMillivolts(-offErr, vBase);
  const mvInput = centsToMillivolts(-offErr, 1);
  return item({
    trimmer: 'offset',
    status: 'adjust',
    direction: offErr > 0 ? 'lower' : 'raise',
    errorCents: offErr,
    ...extra,
    millivoltsAtBase: mvBase,
    millivoltsAtInput: mvInput,
    text:
      lead +
      `: about ${fmtMv(mvBase)} at the converter's base, or ${fmtMv(mvInput)} at the 1 V/oct input.` +
      tail,
  });
}

/**
 * A scale item that asks for a trim: which way (`e` < 0, octaves narrow: widen), the error as `errorText`
 * cents, the gain change, then `rest` (how far to trim, resistor values).
 */
function scaleAdjustItem(
  e: Cents,
  errorText: string,
  gainPct: number,
  resistors: readonly ResistorChange[] | null,
  extra: Pick<AdviceItem, 'uncertaintyCents' | 'target'>,
  rest: string,
): AdviceItem {
  const widen = e < 0;
  return item({
    trimmer: 'scale',
    status: 'adjust',
    direction: widen ? 'widen' : 'narrow',
    errorCents: e,
    ...extra,
    gainChangePercent: gainPct,
    resistors,
    text:
      `Turn the scale trimmer to ${widen ? 'widen' : 'narrow'} the span: octaves are ${errorText} cents ` +
      `${widen ? 'narrow' : 'wide'} (${widen ? 'raise' : 'lower'} the converter's gain by ${fmtPct(gainPct)}). ` +
      rest,
  });
}

/**
 * Trim advice from a tracking fit and its bend analysis: scale, HF and offset items in the order a
 * technician works, each with its direction and amount, plus the next measurement and the usual
 * caution. When an error is within tolerance the item says so instead of inventing work.
 *
 * Amounts: the scale as a gain change `(1/s − 1)·100` percent and the interval to trim to; HF as the
 * top step's deviation from the middle line; the offset in cents, in millivolts at the converter's
 * base (`cents/1200·VT·ln2`, {@link voltsPerOctaveAtBase}) and at a 1 V/oct input (1 mV = 1.2 cents).
 *
 * @param input - The fit, optional bends, tolerance (default ±1 cent), offset target, temperature, network.
 * @returns Items, the next measurement, whether all is within tolerance, and the caution.
 * @throws RangeError for an invalid tolerance, target, temperature or network.
 * @example
 * adviseTrim({ fit }).items[0].text
 * // 'Turn the scale trimmer to widen the span: octaves are 3.2 cents narrow (raise the converter's gain by 0.27 %). …'
 */
export function adviseTrim(input: TrimAdviceInput): TrimAdvice {
  const tol = input.toleranceCents ?? 1;
  if (!Number.isFinite(tol) || tol < 0)
    throw new RangeError(`toleranceCents must be a finite number at least 0, got ${tol}`);
  const { a4Hz, vBase } = checkAdviceInput(input);

  const bends = input.bends?.kind === 'ok' ? input.bends : null;
  const fit: TrackingFitOk | null =
    bends !== null ? bends.middle : input.fit.kind === 'ok' ? input.fit : null;
  if (fit === null) {
    return {
      items: [],
      next:
        'Measure at least two steps a few octaves apart, starting in the 100–200 Hz region, with each reference ' +
        'voltage checked at the input jack with the cable connected.',
      allWithinTolerance: false,
      caution: TRIM_CAUTION,
    };
  }
  const items: AdviceItem[] = [];

  // 1. Scale, from the interval across the trusted middle, with the HF trim left alone.
  const s = fit.octavesPerVolt;
  const e = fit.scaleErrorCentsPerOctave;
  const span = fit.toVolts - fit.fromVolts;
  const accumulated = e * span;
  const intervalNow = CENTS_PER_OCTAVE * s * span;
  const gainPct = (1 / s - 1) * 100;
  let scaleItem: AdviceItem;
  if (Math.abs(accumulated) <= tol) {
    scaleItem = item({
      trimmer: 'scale',
      status: 'within-tolerance',
      errorCents: e,
      text:
        `The scale is within tolerance: octaves are ${fmtCents(e)} cents ${e < 0 ? 'narrow' : 'wide'}, ` +
        `${fmtCents(accumulated)} cents over the ${span.toFixed(3)} V measured (tolerance ±${tol} cent). Leave the scale trimmer.`,
    });
  } else if (Math.abs(e) < 2 * fit.scaleErrorStdErrCents) {
    scaleItem = item({
      trimmer: 'scale',
      status: 'unresolved',
      errorCents: e,
      text:
        `The scale error (${fmtSigned(e)} ± ${fmtCents(fit.scaleErrorStdErrCents)} cents per octave) is not resolved ` +
        'by these readings: take longer readings at each step before trimming.',
    });
  } else {
    const resistors = input.network === undefined ? null : scaleCorrectionResistors(input.network, s);
    let resistorText = '';
    const helpful =
      resistors?.filter((r) => Math.abs(r.e96.resultingScaleErrorCentsPerOctave) < Math.abs(e)) ?? [];
    if (resistors !== null && resistors.length > 0 && helpful.length === 0) {
      resistorText =
        ' No E96 resistor value would leave a smaller scale error than no change: use the trimmer.';
    } else if (resistors !== null && resistors.length > 0) {
      resistorText =
        ' Resistor values for exactly 1 V/oct at the present trimmer setting: ' +
        helpful
          .map(
            (r) =>
              `${partName(r.part)} ${formatOhms(r.fromOhms)} → ${formatOhms(r.toOhms)} ` +
              (r.e96.ohms === r.fromOhms
                ? '(a smaller change than one E96 step, so a fixed resistor cannot make it)'
                : `(nearest E96 ${formatOhms(r.e96.ohms)}, leaving ${fmtSigned(r.e96.resultingScaleErrorCentsPerOctave)} cents per octave)`),
          )
          .join('; or ') +
        '.';
    }
    scaleItem = scaleAdjustItem(
      e,
      fmtCents(e),
      gainPct,
      resistors,
      {},
      `Trim until the interval from ${fmtV(fit.fromVolts)} to ${fmtV(fit.toVolts)} reads ${(CENTS_PER_OCTAVE * span).toFixed(1)} cents; ` +
        `it reads ${intervalNow.toFixed(1)} now. Leave the HF trimmer alone while you do.` +
        resistorText,
    );
  }
  items.push(scaleItem);

  // 2. HF, from the top of the range against the middle line.
  let hfItem: AdviceItem;
  if (bends === null) {
    hfItem = item({
      trimmer: 'hf',
      status: 'unresolved',
      text: 'The HF compensation has not been checked: measure steps up to 2–5 kHz and analyse the bends.',
    });
  } else if (bends.highEnd.kind === 'bent' && Math.abs(bends.highEnd.centsAtEnd) > tol) {
    const hi = bends.highEnd;
    const top = hi.steps[0];
    const flat = hi.direction === 'flat';
    let shape = '';
    if (bends.hf.kind === 'ok') {
      shape =
        bends.hf.better === 'reset-time'
          ? ` The shape fits a core reset time of about ${(bends.hf.resetTime.resetSeconds * 1e6).toPrecision(2)} µs better ` +
            'than bulk emitter resistance; HF compensation corrects a reset time only approximately, so expect some error to remain at the very top.'
          : ' The shape fits bulk emitter resistance (an error in proportion to frequency) better than a reset time; ' +
            'that is the error HF compensation is shaped to cancel.';
    } else if (bends.hf.reason === 'models-alike') {
      shape =
        ' These readings cannot tell a core reset time from bulk emitter resistance: both flatten the top ' +
        'in proportion to frequency.';
    }
    hfItem = item({
      trimmer: 'hf',
      status: 'adjust',
      direction: flat ? 'more-compensation' : 'less-compensation',
      errorCents: hi.centsAtEnd,
      text:
        `Turn the HF trimmer to ${flat ? 'add' : 'reduce'} compensation: the top step at ${fmtHz(top.hz)} Hz (${fmtV(top.volts)}) ` +
        `is ${fmtCents(hi.centsAtEnd)} cents ${flat ? 'flat' : 'sharp'} of the line through the middle steps. ` +
        'Trim it on a step near 2–5 kHz, then check the scale again: the two interact.' +
        shape,
    });
  } else if (bends.highest.hz < HF_CHECK_HZ) {
    hfItem = item({
      trimmer: 'hf',
      status: 'unresolved',
      text: hfUnresolvedText(bends.highest.hz),
    });
  } else {
    const c =
      bends.highEnd.kind === 'bent' ? bends.highEnd.centsAtEnd : bends.deviationsCents[bends.highest.index];
    hfItem = item({
      trimmer: 'hf',
      status: 'within-tolerance',
      errorCents: c,
      text:
        `The top of the range follows the middle line within ±${tol} cent up to ${fmtHz(bends.highest.hz)} Hz. ` +
        'Leave the HF trimmer.',
    });
  }
  items.push(hfItem);

  // 3. Offset, last.
  const refVolts = input.offsetTarget?.volts ?? fit.fromVolts;
  const playing = predictedHz(fit, refVolts);
  const targetHz = input.offsetTarget?.hz ?? nearestNote(playing, a4Hz).noteHz;
  const targetName = targetLabel(targetHz, a4Hz);
  const offErr = CENTS_PER_OCTAVE * Math.log2(playing / targetHz);
  const sharp = offErr > 0;
  let offsetItem: AdviceItem;
  if (Math.abs(offErr) <= tol) {
    offsetItem = item({
      trimmer: 'offset',
      status: 'within-tolerance',
      errorCents: offErr,
      text: `The tuning is within tolerance: ${fmtCents(offErr)} cents ${sharp ? 'sharp' : 'flat'} of ${targetName} at ${fmtV(refVolts)}.`,
    });
  } else {
    offsetItem = offsetAdjustItem(
      offErr,
      vBase,
      {},
      `Set the offset last: at ${fmtV(refVolts)} the oscillator plays ${fmtHz(playing)} Hz, ${fmtCents(offErr)} cents ` +
        `${sharp ? 'sharp' : 'flat'} of ${targetName}. Turn the offset (tuning) trimmer to ${sharp ? 'lower' : 'raise'} the pitch ` +
        `by ${fmtCents(offErr)} cents`,
      scaleItem.status === 'adjust'
        ? ' Trimming the scale moves this, so re-measure it after the scale is set.'
        : '',
    );
  }
  items.push(offsetItem);

  // Notes.
  if (bends !== null && bends.lowEnd.kind === 'bent' && Math.abs(bends.lowEnd.centsAtEnd) > tol) {
    const lo = bends.lowEnd.steps[0];
    items.push(
      item({
        trimmer: 'none',
        status: 'note',
        direction: 'none',
        errorCents: bends.lowEnd.centsAtEnd,
        text:
          `The bottom step at ${fmtHz(lo.hz)} Hz (${fmtV(lo.volts)}) is ${fmtCents(lo.cents)} cents ${lo.cents < 0 ? 'flat' : 'sharp'} ` +
          'of the line through the middle steps. It was left out of the scale fit; decide whether the range you need reaches down there.',
      }),
    );
  }
  if (fit.maxAbsResidualCents > tol) {
    items.push(
      item({
        trimmer: 'none',
        status: 'note',
        errorCents: fit.maxAbsResidualCents,
        text:
          `The middle steps scatter up to ${fmtCents(fit.maxAbsResidualCents)} cents about their line: check each reference voltage ` +
          'at the input jack (about 0.1 % accuracy is needed) and let the oscillator warm up until it drifts less than 0.1 cent per minute.',
      }),
    );
  }

  let next: string;
  if (scaleItem.status === 'adjust') {
    next =
      `After turning the scale trimmer, measure ${fmtV(fit.fromVolts)} and ${fmtV(fit.toVolts)} again until the interval holds; ` +
      'then check the HF on a step near 2–5 kHz.';
  } else if (scaleItem.status === 'unresolved') {
    next = 'Repeat the steps with longer readings so the scale error can be resolved.';
  } else if (hfItem.status === 'adjust') {
    const top = bends !== null && bends.highEnd.kind === 'bent' ? bends.highEnd.steps[0] : null;
    next =
      `Trim the HF${top !== null ? ` on the step at ${fmtHz(top.hz)} Hz` : ''}, then measure the scale interval again; ` +
      'repeat scale and HF until both hold.';
  } else if (hfItem.status === 'unresolved') {
    next = 'Add a step near 2–5 kHz to check the HF compensation.';
  } else if (offsetItem.status === 'adjust') {
    next = `Set the offset at ${fmtV(refVolts)}, then check every octave across the range and record the result.`;
  } else {
    next =
      `Scale, HF and tuning are within ±${tol} cent: check every octave across the range once more and record the readings ` +
      'with the serial number, date, room temperature, warm-up time and the meter used.';
  }
  return {
    items,
    next,
    allWithinTolerance: items
      .filter((i) => i.trimmer !== 'none')
      .every((i) => i.status === 'within-tolerance'),
    caution: TRIM_CAUTION,
  };
}

// ---------------------------------------------------------------------------------------------------
// Advice from the calibration model (dsp/model/model.ts), with budgets and the tolerance verdict
// ---------------------------------------------------------------------------------------------------

/** Gain of the network with one part replaced (see {@link inputNetworkGain}). */
function gainWithPart(network: InputNetwork, part: ResistorChange['part'], ohms: Ohms): number {
  if (network.topology === 'divider') {
    const rs = part === 'series' ? ohms : network.seriesOhms;
    const rsh = part === 'shunt' ? ohms : network.shuntOhms;
    return rsh / (rs + rsh);
  }
  const rin = part === 'input' ? ohms : network.inputOhms;
  const rf = part === 'feedback' ? ohms : network.feedbackOhms;
  return rf / rin;
}

/**
 * Scale-correcting resistor values with their outcome at the part's tolerance: the scale error the nearest
 * E96 value leaves at `ohms·(1 − tol)` and `ohms·(1 + tol)`, and whether even the worse of the two beats
 * leaving the part alone (never suggest a change that can leave a larger error than no change).
 *
 * @param network - The input network.
 * @param octavesPerVolt - Measured scale, octaves per volt, > 0.
 * @param tolerancePercent - The part's tolerance, %, > 0 and at most 20. Default 1 (usual for E96 metal film, common practice).
 * @example resistorOutcomes({ topology: 'divider', seriesOhms: 100e3, shuntOhms: 1.8e3 }, 0.997)[0].withTolerance
 * // { tolerancePercent: 1, lowCentsPerOctave: …, highCentsPerOctave: …, betterThanNoChange: false }
 */
export function resistorOutcomes(
  network: InputNetwork,
  octavesPerVolt: number,
  tolerancePercent = 1,
): ResistorChange[] {
  if (!Number.isFinite(tolerancePercent) || tolerancePercent <= 0 || tolerancePercent > 20) {
    throw new RangeError(
      `tolerancePercent must be a finite number greater than 0 and at most 20, got ${tolerancePercent}`,
    );
  }
  const gain = inputNetworkGain(network);
  const now = CENTS_PER_OCTAVE * (octavesPerVolt - 1);
  return scaleCorrectionResistors(network, octavesPerVolt).map((r) => {
    const at = (ohms: number) =>
      CENTS_PER_OCTAVE * ((octavesPerVolt * gainWithPart(network, r.part, ohms)) / gain - 1);
    const lo = at(r.e96.ohms * (1 - tolerancePercent / 100));
    const hi = at(r.e96.ohms * (1 + tolerancePercent / 100));
    return {
      ...r,
      withTolerance: {
        tolerancePercent,
        lowCentsPerOctave: lo,
        highCentsPerOctave: hi,
        betterThanNoChange: Math.max(Math.abs(lo), Math.abs(hi)) < Math.abs(now),
      },
    };
  });
}

/** Input to {@link adviseFromModel}. */
export interface ModelAdviceInput {
  /** The calibration model over the steps. */
  readonly model: CalibrationModelOk;
  /** Every step, in the order given to the model (for the budgets). */
  readonly steps: readonly BudgetStep[];
  /** Meter, source, clock and temperature for the budgets. */
  readonly budget?: BudgetOptions;
  /** Tolerance over the range in use, cents, > 0. Default 1. */
  readonly toleranceCents?: Cents;
  /** The pitch the unit should play at a voltage. Default: the nearest 12-TET note at the lowest step used. */
  readonly offsetTarget?: { readonly volts: Volts; readonly hz: Hertz };
  /** Tuning reference for the default offset target, Hz. Default 440 (ISO 16:1975). */
  readonly a4Hz?: Hertz;
  /** Converter temperature for the base-voltage figures, °C. Default 25. */
  readonly tempC?: Celsius;
  /** The input network, for resistor values. */
  readonly network?: InputNetwork;
  /** Tolerance of a replacement resistor, %. Default 1. */
  readonly resistorTolerancePercent?: number;
  /**
   * The voltage the scale trimmer turns about, V, when known (seen during an earlier scale trim, see
   * {@link scalePivotVolts}). The offset is then set on the step nearest it, which a scale trim leaves where it
   * is. Default: unknown, and the offset is set on the step nearest the middle of the range.
   */
  readonly scalePivotVolts?: Volts;
}

/**
 * The voltage a scale trimmer turns about, from how far two steps moved while it was turned (the scale pair
 * alternates between them): a scale change δe moves the step at V by δe·(V − p) cents, so
 * `p = (V_B·δ_A − V_A·δ_B)/(δ_A − δ_B)` (derived). Null when the two moves are too close to tell apart
 * (|δ_A − δ_B| under `minDifferenceCents`), as when the trimmer hardly moved.
 *
 * @param voltsA - The lower step's voltage, V, finite.
 * @param voltsB - The upper step's voltage, V, finite and greater than `voltsA`.
 * @param movedCentsA - How far the step at `voltsA` moved, cents (after minus before), finite.
 * @param movedCentsB - How far the step at `voltsB` moved, cents, finite.
 * @param minDifferenceCents - Smallest |δ_A − δ_B| that decides, cents, ≥ 0. Default 0.5.
 * @returns The pivot, V, or null.
 * @throws RangeError for a non-finite value or voltsB not above voltsA.
 * @example scalePivotVolts(0, 4, 2.6, -2.6) // 2 (the trim narrowed the span by 1.3 cents per octave about 2 V)
 */
export function scalePivotVolts(
  voltsA: Volts,
  voltsB: Volts,
  movedCentsA: Cents,
  movedCentsB: Cents,
  minDifferenceCents: Cents = 0.5,
): Volts | null {
  for (const [name, v] of [
    ['voltsA', voltsA],
    ['movedCentsA', movedCentsA],
    ['movedCentsB', movedCentsB],
  ] as const) {
    if (!Number.isFinite(v)) throw new RangeError(`${name} must be a finite number, got ${v}`);
  }
  if (!Number.isFinite(voltsB) || !(voltsB > voltsA)) {
    throw new RangeError(`voltsB must be a finite number greater than voltsA (${voltsA}), got ${voltsB}`);
  }
  if (!Number.isFinite(minDifferenceCents) || minDifferenceCents < 0) {
    throw new RangeError(`minDifferenceCents must be a finite number at least 0, got ${minDifferenceCents}`);
  }
  const d = movedCentsA - movedCentsB;
  if (Math.abs(d) < minDifferenceCents || Math.abs(d) === 0) return null;
  return (voltsB * movedCentsA - voltsA * movedCentsB) / d;
}

/** Advice from the model, with everything it was built on. */
export interface ModelAdvice extends TrimAdvice {
  /** Set when the steps fail a plausibility gate: then no trim is advised. */
  readonly refusal: ModelRefusal | null;
  /** Budgets of the scale, the 0 V pitch and each advised amount. */
  readonly budgets: {
    readonly scale: UncertaintyBudget;
    readonly pitchAt0V: UncertaintyBudget;
    readonly offset: UncertaintyBudget;
    readonly hf: UncertaintyBudget | null;
  };
  /** Each step's error against the offset target's ideal line, with its budget and verdict. */
  readonly tolerance: ToleranceResult;
  /** Step budgets, in input order (errors against the target line as their values). */
  readonly stepBudgets: readonly UncertaintyBudget[];
  /** The reference voltage and the pitch aimed for there. */
  readonly reference: { readonly volts: Volts; readonly hz: Hertz };
}

/** HF is trimmed on a step near 2–5 kHz (docs/facts.md, common practice). */
const HF_TRIM_MAX_HZ: Hertz = 5000;

/**
 * Trim advice from the calibration model: the scale from the model's line (HF and low-end terms apart, so
 * droop never reads as a scale error), the HF on a named step with its target reading, the offset last with
 * its target pitch, a note per suspect step, and the tolerance verdict over the range with every amount's
 * expanded uncertainty. A trimmer is left alone when its share of the error is within a third of the
 * tolerance, or when every step used already reads within the tolerance (a trim lands somewhat off and cannot
 * be expected to improve on that; a verdict the uncertainty leaves open is settled by measuring better); it is
 * "unresolved" when its error is inside its own expanded uncertainty. Steps that fail a plausibility gate get
 * no trim at all, only the message naming the likely cause.
 *
 * Each target reading is chosen so that a trim that lands somewhat off disturbs the trims after it as little as
 * possible: the scale from an interval (immune to the offset and to the pivot the scale trimmer turns about);
 * the HF on the octave below its step, also stated relative to the scale interval as read just before
 * ({@link TrimTarget.relativeTo}), so the scale's landing error does not move the HF setting; the offset last,
 * on the step nearest the middle of the range, so the scale error left over splits evenly. After a scale or HF
 * trim the offset is always asked for, because the pivot is not known and the scale trim moves the tuning.
 * With no other trim, the offset's target centres the steps' errors over the range.
 *
 * @param input - Model, steps, budget options, tolerance, target, network.
 * @returns The advice with budgets and the tolerance verdict.
 * @throws RangeError for an invalid tolerance, target, temperature or network.
 * @example adviseFromModel({ model, steps }).items[0].text // 'Turn the scale trimmer to widen the span: …'
 */
export function adviseFromModel(input: ModelAdviceInput): ModelAdvice {
  const tol = input.toleranceCents ?? 1;
  if (!Number.isFinite(tol) || tol <= 0)
    throw new RangeError(`toleranceCents must be a finite number greater than 0, got ${tol}`);
  const { a4Hz, vBase } = checkAdviceInput(input);
  if (input.scalePivotVolts !== undefined && !Number.isFinite(input.scalePivotVolts)) {
    throw new RangeError(`scalePivotVolts must be a finite number, got ${input.scalePivotVolts}`);
  }
  const { model, steps } = input;
  const used = model.usedIndices;
  const refVolts = input.offsetTarget?.volts ?? model.fromVolts;
  const bopts: BudgetOptions = { ...input.budget, referenceVolts: refVolts };
  const playingRef = modelHz(model, refVolts);
  const targetHz = input.offsetTarget?.hz ?? nearestNote(playingRef, a4Hz).noteHz;
  const targetAt = (v: number) => targetHz * Math.pow(2, v - refVolts);

  const { scale: scaleBudget, pitchAt0V } = lineBudgets(model, steps, bopts);
  const offErr = CENTS_PER_OCTAVE * Math.log2(playingRef / targetHz);
  const offsetBudget = derivedBudget(
    model,
    steps,
    predictionSensitivities(model, refVolts),
    `offset at ${fmtV(refVolts)}`,
    'cents',
    offErr,
    bopts,
  );
  const volts = (i: number) => steps[i].measuredVolts ?? steps[i].nominalVolts;
  const stepErr = steps.map((s, i) => CENTS_PER_OCTAVE * Math.log2(s.hz / targetAt(volts(i))));
  const stepBudgets = steps.map((s, i) => stepBudget(s, bopts, stepErr[i]));
  const tolerance = judgeTolerance(
    used.map((i) => ({ index: i, volts: volts(i), errorCents: stepErr[i], budget: stepBudgets[i] })),
    tol,
  );
  const refusal = checkPlausibility(model);
  const base = {
    refusal,
    budgets: { scale: scaleBudget, pitchAt0V, offset: offsetBudget, hf: null as UncertaintyBudget | null },
    tolerance,
    stepBudgets,
    reference: { volts: refVolts, hz: targetHz },
    caution: TRIM_CAUTION,
  };
  if (refusal !== null) {
    return {
      ...base,
      items: [item({ trimmer: 'none', status: 'note', text: refusal.message })],
      next: refusal.message,
      allWithinTolerance: false,
    };
  }
  const items: AdviceItem[] = [];
  // Leave every trimmer alone once every step the model uses reads within the tolerance: a further trim lands
  // somewhat off and cannot be expected to bring the range inside a tolerance it already meets (a verdict the
  // uncertainty still leaves open is settled by measuring better, not by trimming).
  // "Reads within" counts the reading's own noise (estimator, repeatability, settling; k = 2) but not the
  // voltage's uncertainty: a trim can only bring the pitch onto the voltages as read.
  const readingU = (i: number) => {
    const c = steps[i].components;
    const u =
      c === undefined
        ? steps[i].uncertaintyCents
        : Math.hypot(c.estimatorCents, c.repeatabilityCents, c.settlingCents);
    return 2 * u;
  };
  const settled = used.every((i) => Math.abs(stepErr[i]) + readingU(i) <= tol);
  const allWithin = tolerance.verdict === 'within' || settled;
  const share = tol / 3;

  // Suspect steps first: the user must re-check them before trusting anything else.
  for (const s of model.suspects) {
    items.push(
      item({
        trimmer: 'none',
        status: 'note',
        errorCents: s.deviationCents,
        suspect: { index: s.index, volts: s.volts, likelyVolts: s.likelyVolts },
        text:
          `Step ${s.index + 1}, given as ${fmtV(s.volts)}, plays ${fmtHz(steps[s.index].hz)} Hz: ${fmtCents(s.deviationCents)} cents ` +
          `${s.deviationCents < 0 ? 'flat' : 'sharp'} of what the other steps predict, as if it were at ${fmtV(s.likelyVolts)}. ` +
          'It was left out of the fit: re-check that voltage at the input jack with the cable connected, then measure the step again.',
      }),
    );
  }

  // 1. Scale, from the model's line, over an interval in the low-middle range with the HF left alone.
  const e = model.scaleErrorCentsPerOctave;
  const uE = scaleBudget.expanded;
  const span = model.toVolts - model.fromVolts;
  const usedSorted = used.slice().sort((a, b) => volts(a) - volts(b));
  const aIdx = usedSorted[0];
  const lowMid = usedSorted.filter((i) => modelHz(model, volts(i)) <= 1000 && volts(i) > volts(aIdx));
  const bIdx = lowMid.length > 0 ? lowMid[lowMid.length - 1] : usedSorted[usedSorted.length - 1];
  const vA = volts(aIdx);
  const vB = volts(bIdx);
  const fA = modelHz(model, vA);
  const fB = modelHz(model, vB);
  const bend = (f: number) => hfCents(model, f) + lowEndCents(model, f);
  const scaleTargetInterval = CENTS_PER_OCTAVE * (vB - vA) + bend(fB) - bend(fA);
  const scaleNowInterval = CENTS_PER_OCTAVE * Math.log2(fB / fA);
  let scaleItem: AdviceItem;
  if (allWithin || Math.abs(e) * span <= share) {
    scaleItem = item({
      trimmer: 'scale',
      status: 'within-tolerance',
      errorCents: e,
      uncertaintyCents: uE,
      text:
        `The scale is within tolerance: octaves are ${fmtCents(e)} ± ${formatUncertainty(uE)} cents ${e < 0 ? 'narrow' : 'wide'} ` +
        `(${fmtCents(e * span)} cents over the ${span.toFixed(3)} V in use). Leave the scale trimmer.`,
    });
  } else if (Math.abs(e) <= uE) {
    scaleItem = item({
      trimmer: 'scale',
      status: 'unresolved',
      errorCents: e,
      uncertaintyCents: uE,
      text:
        `The scale error (${fmtSigned(e)} ± ${formatUncertainty(uE)} cents per octave, k = ${scaleBudget.coverageFactor.toFixed(2)}) ` +
        `cannot be told from zero: mostly ${scaleBudget.dominant ? budgetSourceName(scaleBudget.dominant) : 'the readings'}. ` +
        (scaleBudget.dominant === 'reference-voltage'
          ? 'Measure the voltages with a more accurate meter before trimming.'
          : 'Take longer readings at each step before trimming.'),
    });
  } else {
    const s = model.octavesPerVolt;
    const gainPct = (1 / s - 1) * 100;
    const resistors =
      input.network === undefined
        ? null
        : resistorOutcomes(input.network, s, input.resistorTolerancePercent ?? 1);
    let resistorText = '';
    if (resistors !== null) {
      const good = resistors.filter((r) => r.withTolerance?.betterThanNoChange === true);
      if (good.length === 0) {
        resistorText = ` No fixed ${input.resistorTolerancePercent ?? 1} % resistor is sure to leave a smaller scale error than no change: use the trimmer.`;
      } else {
        resistorText =
          ' Or change a resistor: ' +
          good
            .map((r) => {
              const w = r.withTolerance!;
              return (
                `${partName(r.part)} ${formatOhms(r.fromOhms)} → ${formatOhms(r.e96.ohms)} (E96), leaving ${fmtSigned(r.e96.resultingScaleErrorCentsPerOctave)} ` +
                `cents per octave, between ${fmtSigned(Math.min(w.lowCentsPerOctave, w.highCentsPerOctave))} and ${fmtSigned(Math.max(w.lowCentsPerOctave, w.highCentsPerOctave))} with a ${w.tolerancePercent} % part`
              );
            })
            .join('; or ') +
          '.';
      }
    }
    scaleItem = scaleAdjustItem(
      e,
      `${fmtCents(e)} ± ${formatUncertainty(uE)}`,
      gainPct,
      resistors,
      {
        uncertaintyCents: uE,
        target: trimTarget(vA, fA, vB, fB, scaleTargetInterval, scaleNowInterval),
      },
      `Trim until the interval from ${fmtV(vA)} to ${fmtV(vB)} reads ${scaleTargetInterval.toFixed(1)} cents; it reads ${scaleNowInterval.toFixed(1)} now. ` +
        'Leave the HF trimmer alone while you do.' +
        resistorText,
    );
  }
  items.push(scaleItem);

  // 2. HF, on a named step near 2–5 kHz, to a target reading.
  const top = usedSorted[usedSorted.length - 1];
  const fTop = modelHz(model, volts(top));
  let hfItem: AdviceItem;
  let hfBudget: UncertaintyBudget | null = null;
  if (model.terms.hf === 'none') {
    hfItem =
      fTop < HF_CHECK_HZ
        ? item({
            trimmer: 'hf',
            status: allWithin ? 'within-tolerance' : 'unresolved',
            text: hfUnresolvedText(fTop),
          })
        : item({
            trimmer: 'hf',
            status: 'within-tolerance',
            errorCents: 0,
            text: `No HF droop is resolved up to ${fmtHz(fTop)} Hz. Leave the HF trimmer.`,
          });
  } else {
    const below = usedSorted.filter((i) => modelHz(model, volts(i)) <= HF_TRIM_MAX_HZ && volts(i) > vA);
    const hIdx = below.length > 0 ? below[below.length - 1] : top;
    const vH = volts(hIdx);
    const fH = modelHz(model, vH);
    const hAtTop = hfCents(model, fTop) - hfCents(model, fA);
    const hAtH = hfCents(model, fH) - hfCents(model, fA);
    const sensH = hfSensitivities(model, vH);
    hfBudget = derivedBudget(model, steps, sensH, `HF term at ${fmtV(vH)}`, 'cents', hAtH, bopts);
    const eq = model.equivalentResetSeconds ?? 0;
    const shape = model.mixtureResolved
      ? ` The droop resolves into a core reset time of ${(model.parameters.resetSeconds * 1e6).toPrecision(2)} µs and bulk emitter resistance worth ${(model.parameters.bulkAlphaSeconds * 1e6).toPrecision(2)} µs.`
      : ` The droop amounts to an equivalent reset time of ${(eq * 1e6).toPrecision(2)} µs (reset time and bulk resistance look alike here).`;
    if (allWithin || Math.abs(hAtTop) <= share) {
      hfItem = item({
        trimmer: 'hf',
        status: 'within-tolerance',
        errorCents: hAtTop,
        uncertaintyCents: hfBudget.expanded,
        text: `The top of the range is within tolerance: ${fmtCents(hAtTop)} cents ${hAtTop < 0 ? 'flat' : 'sharp'} at ${fmtHz(fTop)} Hz. Leave the HF trimmer.`,
      });
    } else if (Math.abs(hAtH) <= hfBudget.expanded) {
      hfItem = item({
        trimmer: 'hf',
        status: 'unresolved',
        errorCents: hAtH,
        uncertaintyCents: hfBudget.expanded,
        text: `The HF error at ${fmtV(vH)} (${fmtSigned(hAtH)} ± ${formatUncertainty(hfBudget.expanded)} cents) cannot be told from zero: take longer readings of the top steps.`,
      });
    } else {
      const flat = hAtH < 0;
      const sAfter = scaleItem.status === 'adjust' ? 0 : e;
      // Read the HF on the octave below the trim step (docs/facts.md: trim HF on an octave near 2–5 kHz): an
      // interval of one octave carries one octave's worth of whatever scale error the scale trim left, where the
      // interval from the bottom step would carry all of it into the HF setting.
      const octaveBelow = usedSorted.filter((i) => volts(i) >= vA && volts(i) < vH);
      const gIdx = octaveBelow.reduce((b, i) =>
        Math.abs(volts(i) - (vH - 1)) < Math.abs(volts(b) - (vH - 1)) ? i : b,
      );
      const vG = volts(gIdx);
      const fG = modelHz(model, vG);
      const interval =
        (CENTS_PER_OCTAVE + sAfter) * (vH - vG) + lowEndCents(model, fH) - lowEndCents(model, fG);
      const nowInterval = CENTS_PER_OCTAVE * Math.log2(fH / fG);
      // The same target taken from the scale interval as read just before the HF trim, so the scale's own landing
      // error cancels: the top octave should be as wide as the mean octave from vA to vB, once the bends the HF
      // trim removes (at vA and vB, now) and the low-end term it leaves are accounted for.
      const ratio = (vH - vG) / (vB - vA);
      const plusCents = lowEndCents(model, fH) - lowEndCents(model, fG) - ratio * (bend(fB) - bend(fA));
      const relativeTo = { fromVolts: vA, volts: vB, ratio, plusCents };
      hfItem = item({
        trimmer: 'hf',
        status: 'adjust',
        direction: flat ? 'more-compensation' : 'less-compensation',
        errorCents: hAtH,
        uncertaintyCents: hfBudget.expanded,
        target: { ...trimTarget(vG, fG, vH, fH, interval, nowInterval), relativeTo },
        text:
          `Trim the HF on the ${fmtV(vH)} step (${fmtHz(fH)} Hz): it is ${fmtCents(hAtH)} ± ${formatUncertainty(hfBudget.expanded)} cents ${flat ? 'flat' : 'sharp'} ` +
          `of the model's line (${fmtCents(hAtTop)} at the top step, ${fmtHz(fTop)} Hz). Turn the HF trimmer to ${flat ? 'add' : 'reduce'} compensation ` +
          `until the interval from ${fmtV(vG)} to ${fmtV(vH)} reads ${interval.toFixed(1)} cents (now ${nowInterval.toFixed(1)})` +
          (scaleItem.status === 'adjust'
            ? `, after the scale is set. If the scale trim landed off, aim instead for ${ratio.toPrecision(3)} times the interval from ${fmtV(vA)} to ${fmtV(vB)} as it reads then, ` +
              `${plusCents < 0 ? 'less' : 'plus'} ${Math.abs(plusCents).toFixed(1)} cents: the top octave as wide as the octaves below it`
            : `: the ${fmtV(vH)} step should then read ${fmtHz(fG * Math.pow(2, interval / CENTS_PER_OCTAVE))} Hz`) +
          '. Then check the scale again: the two interact.' +
          shape,
      });
    }
  }
  items.push(hfItem);

  // 3. Offset, last, to a target pitch read on the step nearest the middle of the range: the offset trimmer moves
  // every step alike, so setting it there splits whatever scale error remains evenly over the range (derived).
  // With no other trim this pass, the target centres the model's errors over the steps used (the smallest worst
  // error an offset change can give); after a scale or HF trim it puts the step on the target line, and it is
  // always asked for then, because a scale trimmer turns about a pivot that need not be at 0 V (docs/facts.md,
  // "How technicians calibrate"), so the scale trim moves the tuning by an amount no reading before it can tell.
  // A scale trim landing off moves the set step by m·δe·(step − pivot), which the offset must then take up; with
  // the pivot unknown the middle step is the best worst case (`npm run bench -- --only loop` tabulates it), and
  // with the pivot known the step nearest it, which the scale trim leaves where it is.
  const targetName = targetLabel(targetHz, a4Hz);
  const otherTrims = scaleItem.status === 'adjust' || hfItem.status === 'adjust';
  const pivot = input.scalePivotVolts;
  const setNear = pivot ?? (model.fromVolts + model.toVolts) / 2;
  const setIdx = usedSorted.reduce((b, i) =>
    Math.abs(volts(i) - setNear) < Math.abs(volts(b) - setNear) ? i : b,
  );
  const vSet = volts(setIdx);
  const modelErrAt = (v: number) => CENTS_PER_OCTAVE * Math.log2(modelHz(model, v) / targetAt(v));
  const errsNow = usedSorted.map((i) => modelErrAt(volts(i)));
  const shift = otherTrims ? modelErrAt(vSet) : (Math.max(...errsNow) + Math.min(...errsNow)) / 2;
  const playingSet = modelHz(model, vSet);
  const setTargetHz = otherTrims ? targetAt(vSet) : playingSet * Math.pow(2, -shift / CENTS_PER_OCTAVE);
  const setBudget = derivedBudget(
    model,
    steps,
    predictionSensitivities(model, vSet),
    `offset at ${fmtV(vSet)}`,
    'cents',
    shift,
    bopts,
  );
  const uOff = offsetBudget.expanded;
  const uShift = setBudget.expanded;
  let offsetItem: AdviceItem;
  const offTarget: TrimTarget = {
    volts: vSet,
    hz: setTargetHz,
    nowHz: playingSet,
    fromVolts: vSet,
    fromHz: playingSet,
    intervalCents: 0,
    nowIntervalCents: shift,
  };
  if (!otherTrims && (allWithin || Math.abs(shift) <= share)) {
    offsetItem = item({
      trimmer: 'offset',
      status: 'within-tolerance',
      errorCents: offErr,
      uncertaintyCents: uOff,
      text: `The tuning is within tolerance: ${fmtCents(offErr)} ± ${formatUncertainty(uOff)} cents ${offErr > 0 ? 'sharp' : 'flat'} of ${targetName} at ${fmtV(refVolts)}.`,
    });
  } else if (!otherTrims && Math.abs(shift) <= uShift) {
    offsetItem = item({
      trimmer: 'offset',
      status: 'unresolved',
      errorCents: shift,
      uncertaintyCents: uShift,
      text: `The tuning error (${fmtSigned(shift)} ± ${formatUncertainty(uShift)} cents at ${fmtV(vSet)}) cannot be told from zero: mostly ${setBudget.dominant ? budgetSourceName(setBudget.dominant) : 'the readings'}.`,
    });
  } else {
    const sharp = shift > 0;
    offsetItem = offsetAdjustItem(
      shift,
      vBase,
      { uncertaintyCents: uShift, target: offTarget },
      otherTrims
        ? `Set the offset last, on the ${fmtV(vSet)} step: after the trims above, turn the offset (tuning) trimmer until that step reads ` +
            `${fmtHz(setTargetHz)} Hz, which puts ${fmtV(refVolts)} on ${targetName}. Before those trims it reads ${fmtHz(playingSet)} Hz, ` +
            `${fmtCents(shift)} ± ${formatUncertainty(uShift)} cents ${sharp ? 'sharp' : 'flat'}`
        : `Set the offset last, on the ${fmtV(vSet)} step: it plays ${fmtHz(playingSet)} Hz. Turn the offset (tuning) trimmer to ` +
            `${sharp ? 'lower' : 'raise'} the pitch by ${fmtCents(shift)} ± ${formatUncertainty(uShift)} cents, until that step reads ${fmtHz(setTargetHz)} Hz, ` +
            `which centres the errors of the steps over the range about the line through ${targetName} at ${fmtV(refVolts)}`,
      otherTrims
        ? pivot === undefined
          ? ' The scale and HF trims move this step (a scale trimmer turns about a pivot that need not be at 0 V), so read it again after them and set it then.' +
            ' The step that holds still while you turn the scale trimmer is that pivot (the Scale pair shows it): with it given, the offset is set there and later scale trims leave it in place.'
          : ` It is the step nearest the scale trimmer's pivot (${fmtV(pivot)}), so the scale trim hardly moves it; read it again after the trims above and set it then.`
        : '',
    );
  }
  items.push(offsetItem);

  if (model.terms.lowEnd) {
    const lo = lowEndCents(model, fA);
    items.push(
      item({
        trimmer: 'none',
        status: 'note',
        errorCents: lo,
        text:
          `The bottom of the range runs ${fmtCents(lo)} cents ${lo > 0 ? 'sharp' : 'flat'} at ${fmtHz(fA)} Hz, as a frequency floor of ` +
          `${Math.abs(model.parameters.lowEndHz).toPrecision(2)} Hz would (leakage current or an offset at the converter). No trimmer in the usual set corrects it; ` +
          'decide whether the range you need reaches down there.',
      }),
    );
  }
  if (tolerance.verdict === 'cannot-tell') {
    items.push(item({ trimmer: 'none', status: 'note', text: tolerance.text }));
  }

  let next: string;
  if (model.suspects.length > 0) {
    next = `Re-check the voltage of ${model.suspects.map((s) => `step ${s.index + 1} (${fmtV(s.volts)})`).join(' and ')} at the input jack and measure ${model.suspects.length > 1 ? 'them' : 'it'} again before trimming.`;
  } else if (scaleItem.status === 'adjust') {
    next = `After turning the scale trimmer, measure ${fmtV(vA)} and ${fmtV(vB)} again until the interval reads ${scaleTargetInterval.toFixed(1)} cents; then check the HF${hfItem.status === 'adjust' ? ` on the ${fmtV(hfItem.target?.volts ?? vB)} step` : ''}.`;
  } else if (hfItem.status === 'adjust') {
    next = `Trim the HF on the ${fmtV(hfItem.target?.volts ?? vB)} step to its target, then measure the scale interval again; repeat scale and HF until both hold.`;
  } else if (offsetItem.status === 'adjust') {
    next = `Set the offset on the ${fmtV(vSet)} step to ${fmtHz(setTargetHz)} Hz, then run every step again and record the result.`;
  } else if (tolerance.verdict === 'within') {
    next =
      `Every step is within ±${tol} cent, uncertainty included: record the readings with the serial number, date, room temperature, ` +
      'warm-up time and the meter used.';
  } else if (tolerance.verdict === 'cannot-tell') {
    next = tolerance.text;
  } else {
    next = 'Repeat the steps with longer readings so the remaining errors can be resolved.';
  }
  return {
    ...base,
    budgets: { ...base.budgets, hf: hfBudget },
    items,
    next,
    allWithinTolerance: tolerance.verdict === 'within',
  };
}
