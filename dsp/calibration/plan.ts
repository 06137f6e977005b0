/**
 * Calibration plans: the ordered list of reference voltages a run walks through.
 *
 * Facts used (docs/facts.md): at 1 V/oct one volt is one octave, 1200 cents; a semitone
 * is 1/12 V = 83.333 mV; 1 mV is 1.2 cents. Eurorack rails are ±12 V, which bounds every plan here.
 */
import type { Volts } from '../math/index.ts';

/** A plan: an id, a label for people, and the reference voltages in the order they are applied. */
export interface Plan {
  /** Stable identifier (`'octaves-0-7'`, `'custom'`, …). */
  readonly id: string;
  /** Label shown to the user. */
  readonly label: string;
  /** Reference voltages, volts, in the order they are applied; no two closer than {@link PLAN_LIMITS}.minSpacingVolts. */
  readonly volts: readonly Volts[];
}

/**
 * The one limit on a control voltage anywhere in Spanmeter (plans, `--points`, meter readings, the fit
 * range, the simulator, stored results), V: the ±12 V Eurorack rails (docs/facts.md, "Control voltages"),
 * beyond which no 1 V/oct control source goes.
 */
export const MAX_CONTROL_VOLTS: Volts = 12;

/** Limits every plan obeys, whether a preset or typed in. */
export const PLAN_LIMITS = {
  /** Fewest points: a scale needs an interval, so two. */
  minPoints: 2,
  /** Most points. */
  maxPoints: 64,
  /** Lowest reference voltage, V ({@link MAX_CONTROL_VOLTS}). */
  minVolts: -MAX_CONTROL_VOLTS,
  /** Highest reference voltage, V ({@link MAX_CONTROL_VOLTS}). */
  maxVolts: MAX_CONTROL_VOLTS,
  /**
   * Two points closer than this count as duplicates, and a range must land on its end within it, V.
   * 0.1 mV is 0.12 cent at 1 V/oct (1 mV = 1.2 cents, docs/facts.md), below what a 4½-digit meter resolves.
   */
  minSpacingVolts: 1e-4,
} as const;

/** Identifiers of the built-in plans. */
export type PresetPlanId = 'octaves-0-4' | 'octaves-0-7' | 'octaves-0-9' | 'half-volts-0-7' | 'semitones-0-1';

function evenly(from: Volts, to: Volts, intervals: number): Volts[] {
  const out: Volts[] = [];
  for (let k = 0; k <= intervals; k++) out.push(from + ((to - from) * k) / intervals + 0);
  return out;
}

/**
 * The built-in plans, in menu order.
 *
 * - `octaves-0-4`, `octaves-0-7`, `octaves-0-9`: whole volts, one octave apart at 1 V/oct.
 * - `half-volts-0-7`: 0 to 7 V in 0.5 V steps (half an octave, 600 cents, apart).
 * - `semitones-0-1`: 13 points k/12 V, k = 0…12: a semitone (83.333 mV at 1 V/oct, docs/facts.md) apart over one octave.
 *
 * @example PLAN_PRESETS.find((p) => p.id === 'semitones-0-1')?.volts[1] // 0.08333333333333333 (= 1/12)
 */
export const PLAN_PRESETS: readonly Plan[] = Object.freeze([
  { id: 'octaves-0-4', label: 'Five octaves: 0 to 4 V in 1 V steps', volts: evenly(0, 4, 4) },
  { id: 'octaves-0-7', label: 'Eight octaves: 0 to 7 V in 1 V steps', volts: evenly(0, 7, 7) },
  { id: 'octaves-0-9', label: 'Ten octaves: 0 to 9 V in 1 V steps', volts: evenly(0, 9, 9) },
  { id: 'half-volts-0-7', label: 'Half-volt steps: 0 to 7 V by 0.5 V', volts: evenly(0, 7, 14) },
  { id: 'semitones-0-1', label: 'Semitone check: 0 to 1 V in 1/12 V steps', volts: evenly(0, 1, 12) },
]);

/** Id of the plan a new run uses unless told otherwise: 0 to 7 V in 1 V steps. */
export const DEFAULT_PLAN_ID: PresetPlanId = 'octaves-0-7';

/**
 * A built-in plan by id.
 *
 * @param id - One of {@link PresetPlanId}.
 * @throws RangeError when `id` names no preset.
 * @example presetPlan('octaves-0-4').volts // [0, 1, 2, 3, 4]
 */
export function presetPlan(id: PresetPlanId = DEFAULT_PLAN_ID): Plan {
  const p = PLAN_PRESETS.find((q) => q.id === id);
  if (!p) {
    throw new RangeError(
      `id must be one of ${PLAN_PRESETS.map((q) => q.id).join(', ')}, got ${JSON.stringify(id)}`,
    );
  }
  return p;
}

/**
 * A semitone check over one octave starting at `fromVolts`: 13 points `fromVolts + k/12` V, k = 0…12
 * (a semitone is 83.333 mV at 1 V/oct, docs/facts.md).
 *
 * @param fromVolts - Bottom of the octave, V, in [−12, 11].
 * @throws RangeError when `fromVolts` is outside [−12, 11] or not finite.
 * @example semitonePlan(2).volts[12] // 3
 */
export function semitonePlan(fromVolts: Volts = 0): Plan {
  if (
    !Number.isFinite(fromVolts) ||
    fromVolts < PLAN_LIMITS.minVolts ||
    fromVolts > PLAN_LIMITS.maxVolts - 1
  ) {
    throw new RangeError(
      `fromVolts must be a finite number in [${PLAN_LIMITS.minVolts}, ${PLAN_LIMITS.maxVolts - 1}] V, got ${fromVolts}`,
    );
  }
  const volts = evenly(0, 1, 12).map((v) => fromVolts + v);
  return { id: 'semitones', label: `Semitone check: ${fmt(fromVolts)} to ${fmt(fromVolts + 1)} V`, volts };
}

/** Why a plan text was refused. */
export type PlanErrorReason =
  | 'empty'
  | 'not-a-number'
  | 'bad-step'
  | 'range-misses-end'
  | 'out-of-range'
  | 'duplicate'
  | 'too-few-points'
  | 'too-many-points';

/** Result of {@link parsePlan}: the voltages, or a specific message saying what is wrong and where. */
export type PlanParse =
  | { readonly kind: 'ok'; readonly volts: readonly Volts[] }
  | { readonly kind: 'error'; readonly reason: PlanErrorReason; readonly message: string };

const NUM = String.raw`[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?`;
const NUMBER_RE = new RegExp(`^(${NUM})\\s*[vV]?$`);
// Each optional unit after a number is written `(?:\s*[vV])?`, not `\s*[vV]?`, so that a run of spaces can be
// matched in only one way: `\s*[vV]?\s*` let the engine split n spaces n ways, and a long pasted line took
// time quadratic in its length (seconds for 100 000 characters).
const RANGE_RE = new RegExp(
  `^(${NUM})(?:\\s*[vV])?\\s*(?:-|–|\\.\\.|to)\\s*(${NUM})(?:\\s*[vV])?(?:\\s*(?:/|by|step)\\s*(${NUM})\\s*[vV]?)?$`,
);
/** A stepped range `start:step:end` (each part a number, optionally with its `V`). */
const STEPPED_RE = new RegExp(
  `^(${NUM})(?:\\s*[vV])?\\s*:\\s*(${NUM})(?:\\s*[vV])?\\s*:\\s*(${NUM})\\s*[vV]?$`,
);

/** Options of {@link parsePlan}. */
export interface PlanParseOptions {
  /**
   * Fewest points, 1…{@link PLAN_LIMITS}.minPoints. Default {@link PLAN_LIMITS}.minPoints (a run needs an
   * interval); a recording or a simulation may hold a single step.
   */
  readonly minPoints?: number;
  /**
   * Allow a voltage to come back (`0, 1, 0`): a recording may return to a step. Default false: a run
   * steps through distinct voltages.
   */
  readonly allowRepeats?: boolean;
}

function fmt(v: number): string {
  return String(Number(v.toPrecision(12)));
}

function err(reason: PlanErrorReason, message: string): PlanParse {
  return { kind: 'error', reason, message };
}

/**
 * Reads a plan: the one grammar of the app's plan box, `analyze --points` and `simulate --plan`. Never throws.
 *
 * Grammar: items separated by commas, semicolons or new lines; each item is
 * - a voltage: `2`, `2.5`, `-1`, `2.5V`;
 * - a range in 1 V steps: `0-7` (also `0..7`, `0 to 7`, `0–7`); it may go down (`7-0`);
 * - a stepped range `start:step:end`: `0:0.5:5` (also written `0-5/0.5`, `0-5 by 0.5`).
 * A step is a positive size and must land on the end within 0.1 mV; the points are spread evenly from
 * start to end, so `0:0.08333:1` gives exactly k/12 V. Points may come in any order, but (unless
 * `allowRepeats`) no two may be closer than 0.1 mV; there must be `minPoints`…64 of them, each within
 * ±{@link MAX_CONTROL_VOLTS} V.
 *
 * @param text - What the user typed.
 * @param options - See {@link PlanParseOptions}.
 * @returns `{ kind: 'ok', volts }` or `{ kind: 'error', reason, message }`.
 * @example parsePlan('0-7') // { kind: 'ok', volts: [0, 1, 2, 3, 4, 5, 6, 7] }
 * @example parsePlan('0:0.5:2') // { kind: 'ok', volts: [0, 0.5, 1, 1.5, 2] }
 * @example parsePlan('0, 1, 1') // { kind: 'error', reason: 'duplicate', message: 'point 3 (1 V) repeats point 2 (1 V)' }
 */
export function parsePlan(text: string, options: PlanParseOptions = {}): PlanParse {
  if (typeof text !== 'string' || text.trim() === '') {
    return err('empty', 'the plan is empty: type voltages such as "0, 1, 2, 3" or a range such as "0-7"');
  }
  const items = text
    .split(/[,;\n]+/)
    .map((s) => s.trim())
    .filter((s) => s !== '');
  if (items.length === 0)
    return err('empty', 'the plan is empty: type voltages such as "0, 1, 2, 3" or a range such as "0-7"');
  const volts: Volts[] = [];
  for (const item of items) {
    const single = NUMBER_RE.exec(item);
    if (single) {
      const v = Number(single[1]) + 0; // '-0' reads as 0
      if (!Number.isFinite(v)) return err('not-a-number', `"${item}" is not a finite number of volts`);
      volts.push(v);
      if (volts.length > PLAN_LIMITS.maxPoints) return tooMany(volts.length);
      continue;
    }
    const stepped = STEPPED_RE.exec(item);
    const range = stepped ? null : RANGE_RE.exec(item);
    if (!stepped && !range) {
      return err(
        'not-a-number',
        `"${item}" is neither a voltage (like 2.5) nor a range (like 0-7 or 0:0.5:7)`,
      );
    }
    const a = Number(stepped ? stepped[1] : range![1]);
    const b = Number(stepped ? stepped[3] : range![2]);
    const stepText = stepped ? stepped[2] : range![3];
    const step = stepText === undefined ? 1 : Number(stepText);
    if (!Number.isFinite(a) || !Number.isFinite(b))
      return err('not-a-number', `"${item}" has an end that is not a finite number`);
    if (!Number.isFinite(step) || step <= 0) {
      return err('bad-step', `the step in "${item}" must be a positive number of volts, got ${stepText}`);
    }
    if (Math.abs(b - a) < PLAN_LIMITS.minSpacingVolts) {
      return err('duplicate', `the range "${item}" starts and ends at the same voltage`);
    }
    const exact = Math.abs(b - a) / step;
    if (exact > PLAN_LIMITS.maxPoints) return tooMany(Math.floor(exact) + 1 + volts.length);
    const n = Math.round(exact);
    if (n < 1 || Math.abs(n * step - Math.abs(b - a)) > PLAN_LIMITS.minSpacingVolts) {
      return err(
        'range-misses-end',
        `steps of ${fmt(step)} V from ${fmt(a)} V do not land on ${fmt(b)} V (the nearest is ${fmt(a + Math.sign(b - a) * Math.max(1, n) * step)} V); choose a step that divides ${fmt(Math.abs(b - a))} V`,
      );
    }
    volts.push(...evenly(a, b, n));
    if (volts.length > PLAN_LIMITS.maxPoints) return tooMany(volts.length);
  }
  const checked = checkPlanVolts(volts, options);
  return checked ?? { kind: 'ok', volts };
}

function tooMany(n: number): PlanParse {
  return err('too-many-points', `the plan has ${n} points; at most ${PLAN_LIMITS.maxPoints} are allowed`);
}

function checkPlanVolts(volts: readonly number[], options: PlanParseOptions = {}): PlanParse | null {
  const minPoints = options.minPoints ?? PLAN_LIMITS.minPoints;
  for (let i = 0; i < volts.length; i++) {
    const v = volts[i];
    if (typeof v !== 'number' || !Number.isFinite(v))
      return err('not-a-number', `point ${i + 1} is not a finite number`);
    if (v < PLAN_LIMITS.minVolts || v > PLAN_LIMITS.maxVolts) {
      return err(
        'out-of-range',
        `point ${i + 1} (${fmt(v)} V) lies outside ${PLAN_LIMITS.minVolts}…+${PLAN_LIMITS.maxVolts} V`,
      );
    }
  }
  const order = volts.map((v, i) => ({ v, i })).sort((p, q) => p.v - q.v || p.i - q.i);
  for (let k = 1; k < order.length && options.allowRepeats !== true; k++) {
    if (order[k].v - order[k - 1].v < PLAN_LIMITS.minSpacingVolts) {
      const [first, second] =
        order[k].i < order[k - 1].i ? [order[k], order[k - 1]] : [order[k - 1], order[k]];
      return err(
        'duplicate',
        `point ${second.i + 1} (${fmt(second.v)} V) repeats point ${first.i + 1} (${fmt(first.v)} V)`,
      );
    }
  }
  if (volts.length < minPoints) {
    return err(
      'too-few-points',
      `the plan has ${volts.length} point${volts.length === 1 ? '' : 's'}; at least ${minPoints} ${minPoints === 1 ? 'is' : 'are'} needed`,
    );
  }
  if (volts.length > PLAN_LIMITS.maxPoints) return tooMany(volts.length);
  return null;
}

/**
 * Checks a list of voltages against {@link PLAN_LIMITS} without throwing.
 *
 * @param volts - Candidate plan, V.
 * @returns The same shape as {@link parsePlan}.
 * @example validatePlanVolts([0, 13]) // { kind: 'error', reason: 'out-of-range', message: 'point 2 (13 V) lies outside -12…+12 V' }
 */
export function validatePlanVolts(volts: readonly Volts[]): PlanParse {
  if (!Array.isArray(volts)) return err('empty', 'the plan is not a list of voltages');
  return checkPlanVolts(volts) ?? { kind: 'ok', volts: [...volts] };
}

/**
 * A plan from the user's own voltages.
 *
 * @param volts - Reference voltages, V: 2…64 points in −12…+12 V, none within 0.1 mV of another.
 * @param label - Label to show; default built from the voltages.
 * @throws RangeError naming the problem when `volts` breaks {@link PLAN_LIMITS}.
 * @example customPlan([0, 2, 4]).volts // [0, 2, 4]
 */
export function customPlan(volts: readonly Volts[], label?: string): Plan {
  const r = validatePlanVolts(volts);
  if (r.kind === 'error') throw new RangeError(`volts: ${r.message}`);
  return { id: 'custom', label: label ?? `Custom: ${formatPlan(r.volts)} V`, volts: r.volts };
}

/**
 * Writes voltages back as plan text that {@link parsePlan} reads to the same values: an evenly spaced list
 * of three or more points becomes a range (`0-7`, `0:0.5:7`), anything else a comma list.
 *
 * @param volts - Voltages, V.
 * @example formatPlan([0, 0.5, 1, 1.5]) // '0:0.5:1.5'
 * @example formatPlan([0, 2, 3]) // '0, 2, 3'
 */
export function formatPlan(volts: readonly Volts[]): string {
  if (volts.length >= 3) {
    const step = (volts[volts.length - 1] - volts[0]) / (volts.length - 1);
    const even =
      step !== 0 &&
      volts.every((v, k) => Math.abs(v - (volts[0] + step * k)) <= 1e-9 * Math.max(1, Math.abs(v)));
    if (even) {
      const size = Math.abs(step);
      const first = fmt(volts[0]);
      const last = fmt(volts[volts.length - 1]);
      return Math.abs(size - 1) < 1e-12 ? `${first}-${last}` : `${first}:${fmt(size)}:${last}`;
    }
  }
  return volts.map(fmt).join(', ');
}
