/**
 * The Span run's Setup: the interface clock correction, the fit range and the input network, as typed
 * by the user, checked, turned into analysis options, and kept in `localStorage` between sessions.
 * Pure functions of plain data (the storage is passed in), so tests run them in Node.
 */
import type { InputNetwork } from '../../../dsp/advice/index.ts';
import { MAX_CLOCK_PPM } from '../../../dsp/io/index.ts';
import { parseOhms } from '../../../dsp/converter/index.ts';
import { MAX_CONTROL_VOLTS } from '../../../dsp/calibration/index.ts';
import type { CalibrationOptions } from '../../../dsp/recording/index.ts';
import { parseNumberField } from './fields.ts';

/** The Setup as the form holds it: the text of every field, so a half-typed value is never lost. */
export interface SetupForm {
  /** Interface clock error, ppm (positive = fast); '' for none. */
  readonly clockPpm: string;
  /** Fit range, V; '' for no limit. */
  readonly fitFromVolts: string;
  readonly fitToVolts: string;
  /** `none`, or the network the scale trimmer acts on. */
  readonly topology: 'none' | InputNetwork['topology'];
  /** Series (divider) or input (summer) resistor, e.g. `100k`. */
  readonly firstOhms: string;
  /** Shunt (divider) or feedback (summer) resistor, e.g. `1.8k`. */
  readonly secondOhms: string;
  /** The voltage the scale trimmer turns about, V (the scale pair measures it); '' when not known. */
  readonly scalePivotVolts: string;
}

/** An empty Setup: no clock correction, every step fitted, no network. */
export const DEFAULT_SETUP: SetupForm = Object.freeze({
  clockPpm: '',
  fitFromVolts: '',
  fitToVolts: '',
  topology: 'none',
  firstOhms: '',
  secondOhms: '',
  scalePivotVolts: '',
});

/** What the Setup gives the analysis, and what is wrong with it. */
export interface SetupOptions extends CalibrationOptions {
  /** Interface clock error, ppm, within ±{@link MAX_CLOCK_PPM}; 0 when none is set. */
  readonly clockPpm: number;
  /** One line per field that could not be used (that field is left out of the options). */
  readonly problems: readonly string[];
  /**
   * The unit's tolerance, cents (the unit form's, or the book's default): the live run, an opened recording,
   * the book and the report judge against this one figure. Not part of the Setup form; the app adds it.
   */
  readonly toleranceCents?: number;
}

/** Names of the two resistors of each network, for labels and messages. */
export const RESISTOR_NAMES: Readonly<Record<InputNetwork['topology'], readonly [string, string]>> = {
  divider: ['Series Rs', 'Shunt Rsh'],
  'inverting-summer': ['Input Rin', 'Feedback Rf'],
};

/** Voltages accepted for the fit range, V: the one limit of every control voltage (dsp/calibration/plan.ts). */
const FIT_VOLTS_LIMIT = MAX_CONTROL_VOLTS;

/** A number by the one field rule (lib/fields.ts: decimal point or comma, no exponent), or null. */
function parseNumber(text: string): number | null {
  const p = parseNumberField(text);
  return p.kind === 'ok' ? p.value : null;
}

/** Resistor text for `parseOhms`, with a decimal comma read as a point ("1,8k" is "1.8k"). */
function ohmsText(text: string): string {
  return text.replace(/(\d),(\d)/, '$1.$2');
}

/**
 * Checks the form and builds the analysis options. Never throws: a field that cannot be used is left
 * out and named in `problems`; an empty field means "not set".
 *
 * @param form - The Setup as typed.
 * @example setupOptions({ ...DEFAULT_SETUP, topology: 'divider', firstOhms: '100k', secondOhms: '1.8k' }).network
 * // { topology: 'divider', seriesOhms: 100000, shuntOhms: 1800 }
 * @example setupOptions({ ...DEFAULT_SETUP, clockPpm: 'fast' }).problems
 * // ['Clock correction: 'fast' is not a number of ppm (−1000 to 1000).']
 */
export function setupOptions(form: SetupForm): SetupOptions {
  const problems: string[] = [];
  let clockPpm = 0;
  if (form.clockPpm.trim() !== '') {
    const v = parseNumber(form.clockPpm);
    if (v === null || Math.abs(v) > MAX_CLOCK_PPM) {
      problems.push(
        `Clock correction: '${form.clockPpm.trim()}' is not a number of ppm (−${MAX_CLOCK_PPM} to ${MAX_CLOCK_PPM}).`,
      );
    } else clockPpm = v;
  }
  const volts = (label: string, text: string): number | undefined => {
    if (text.trim() === '') return undefined;
    const v = parseNumber(text);
    if (v === null || Math.abs(v) > FIT_VOLTS_LIMIT) {
      problems.push(
        `Fit ${label}: '${text.trim()}' is not a voltage (−${FIT_VOLTS_LIMIT} to ${FIT_VOLTS_LIMIT} V).`,
      );
      return undefined;
    }
    return v;
  };
  let fitFromVolts = volts('from', form.fitFromVolts);
  let fitToVolts = volts('to', form.fitToVolts);
  if (fitFromVolts !== undefined && fitToVolts !== undefined && fitFromVolts > fitToVolts) {
    problems.push(`Fit range: from ${fitFromVolts} V is above to ${fitToVolts} V; every step is fitted.`);
    fitFromVolts = undefined;
    fitToVolts = undefined;
  }
  let scalePivotVolts: number | undefined;
  if (form.scalePivotVolts.trim() !== '') {
    const v = parseNumber(form.scalePivotVolts);
    if (v === null || Math.abs(v) > FIT_VOLTS_LIMIT) {
      problems.push(
        `Scale pivot: '${form.scalePivotVolts.trim()}' is not a voltage (−${FIT_VOLTS_LIMIT} to ${FIT_VOLTS_LIMIT} V).`,
      );
    } else {
      scalePivotVolts = v;
    }
  }
  let network: InputNetwork | undefined;
  if (form.topology !== 'none') {
    const names = RESISTOR_NAMES[form.topology];
    const ohms = [form.firstOhms, form.secondOhms].map((text, i) => {
      const r = parseOhms(ohmsText(text));
      if (r.kind === 'ok') return r.ohms;
      problems.push(`${names[i]}: ${text.trim() === '' ? 'needs a value such as 100k' : r.message}.`);
      return null;
    });
    const [a, b] = ohms;
    if (a !== null && b !== null) {
      network =
        form.topology === 'divider'
          ? { topology: 'divider', seriesOhms: a, shuntOhms: b }
          : { topology: 'inverting-summer', inputOhms: a, feedbackOhms: b };
    }
  }
  return {
    clockPpm,
    ...(fitFromVolts === undefined ? {} : { fitFromVolts }),
    ...(fitToVolts === undefined ? {} : { fitToVolts }),
    ...(network === undefined ? {} : { network }),
    ...(scalePivotVolts === undefined ? {} : { scalePivotVolts }),
    problems,
  };
}

/**
 * The Setup in one line, saying only what is in use (a field that cannot be used is named as ignored,
 * never repeated as if it applied).
 *
 * @example setupSummary(DEFAULT_SETUP) // 'no clock correction, every step fitted, no network'
 */
export function setupSummary(form: SetupForm): string {
  const o = setupOptions(form);
  const parts: string[] = [];
  if (o.clockPpm !== 0) parts.push(`clock ${o.clockPpm > 0 ? '+' : ''}${o.clockPpm} ppm`);
  if (o.fitFromVolts !== undefined || o.fitToVolts !== undefined) {
    parts.push(`fit ${o.fitFromVolts ?? 'lowest'} to ${o.fitToVolts ?? 'highest'} V`);
  }
  if (o.network) {
    const n = o.network;
    parts.push(
      n.topology === 'divider'
        ? `divider ${form.firstOhms.trim()}, ${form.secondOhms.trim()}`
        : `summer ${form.firstOhms.trim()}, ${form.secondOhms.trim()}`,
    );
  }
  if (o.scalePivotVolts !== undefined) parts.push(`scale pivot ${o.scalePivotVolts} V`);
  const used = parts.length > 0 ? parts.join(' · ') : 'no clock correction, every step fitted, no network';
  return o.problems.length > 0
    ? `${used} · ${o.problems.length} field${o.problems.length === 1 ? '' : 's'} ignored (invalid)`
    : used;
}

/** The `localStorage` key of the Setup. */
export const SETUP_STORAGE_KEY = 'spanmeter.setup.v1';

/** The part of the Web Storage API used here. */
export interface SetupStorage {
  getItem(key: string): string | null;
  setItem(key: string, value: string): void;
}

const TOPOLOGIES: readonly SetupForm['topology'][] = ['none', 'divider', 'inverting-summer'];
/** Longest text kept per field: anything longer is not a value anyone typed. */
const MAX_FIELD_LENGTH = 40;

/**
 * Reads a stored Setup. Never throws: unreadable JSON gives {@link DEFAULT_SETUP}, and each field that
 * is not a short string (or a known topology) falls back to its default, so garbage is ignored field
 * by field.
 *
 * @param json - The stored text, or null when nothing is stored.
 * @example parseStoredSetup('{"clockPpm":"12.5","topology":"bogus"}') // { ...DEFAULT_SETUP, clockPpm: '12.5' }
 */
export function parseStoredSetup(json: string | null): SetupForm {
  if (json === null) return DEFAULT_SETUP;
  let raw: unknown;
  try {
    raw = JSON.parse(json);
  } catch {
    return DEFAULT_SETUP;
  }
  if (typeof raw !== 'object' || raw === null || Array.isArray(raw)) return DEFAULT_SETUP;
  const o = raw as Record<string, unknown>;
  const text = (k: Exclude<keyof SetupForm, 'topology'>): string => {
    const v = o[k];
    return typeof v === 'string' && v.length <= MAX_FIELD_LENGTH ? v : DEFAULT_SETUP[k];
  };
  const topology = TOPOLOGIES.find((t) => t === o.topology) ?? DEFAULT_SETUP.topology;
  return {
    clockPpm: text('clockPpm'),
    fitFromVolts: text('fitFromVolts'),
    fitToVolts: text('fitToVolts'),
    topology,
    firstOhms: text('firstOhms'),
    secondOhms: text('secondOhms'),
    scalePivotVolts: text('scalePivotVolts'),
  };
}

/**
 * The stored Setup, or the default when there is none or storage is unavailable (never throws).
 *
 * @param storage - `window.localStorage`, or a fake in tests.
 */
export function loadSetup(storage: SetupStorage | null): SetupForm {
  try {
    return parseStoredSetup(storage?.getItem(SETUP_STORAGE_KEY) ?? null);
  } catch {
    return DEFAULT_SETUP;
  }
}

/**
 * Stores the Setup (quietly does nothing when storage is unavailable or full).
 *
 * @param storage - `window.localStorage`, or a fake in tests.
 * @param form - The Setup as typed.
 */
export function saveSetup(storage: SetupStorage | null, form: SetupForm): void {
  try {
    storage?.setItem(SETUP_STORAGE_KEY, JSON.stringify(form));
  } catch {
    // Private mode or a full quota: the Setup lasts for this session only.
  }
}
