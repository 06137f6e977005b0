/**
 * The trim loop's pass history: one row per sweep with its scale, HF and offset errors, and the
 * loop's verdict. Two trims that interact converge in a few passes (docs/facts.md, "How technicians
 * calibrate", common practice), so the history shows the trend and the loop stops on "done".
 */
import type { TrimAdvice } from '../advice/index.ts';
import type { Cents } from '../math/index.ts';

/** One pass of the trim loop. */
export interface PassRow {
  /** 1, 2, 3… */
  readonly pass: number;
  /** Scale error, cents per octave (negative = octaves narrow), or null when not measured. */
  readonly scaleCentsPerOctave: Cents | null;
  /** HF error at the top step, cents, or null. */
  readonly hfCents: Cents | null;
  /** Offset error at the reference voltage, cents, or null. */
  readonly offsetCents: Cents | null;
  /** True when scale, HF and offset were all within tolerance. */
  readonly withinTolerance: boolean;
  /** True when the pass's advice asked for at least one trim. */
  readonly trimAdvised: boolean;
}

/**
 * A pass row from one sweep's trim advice (dsp/advice/advice.ts).
 *
 * @param pass - Pass number, integer ≥ 1.
 * @param advice - The sweep's advice.
 * @example passFromAdvice(1, advice).pass // 1
 */
export function passFromAdvice(pass: number, advice: TrimAdvice): PassRow {
  if (!Number.isInteger(pass) || pass < 1) throw new RangeError(`pass must be an integer ≥ 1, got ${pass}`);
  const of = (t: 'scale' | 'hf' | 'offset') => advice.items.find((i) => i.trimmer === t)?.errorCents ?? null;
  return {
    pass,
    scaleCentsPerOctave: of('scale'),
    hfCents: of('hf'),
    offsetCents: of('offset'),
    withinTolerance: advice.allWithinTolerance,
    trimAdvised: advice.items.some((i) => i.status === 'adjust'),
  };
}

/** What the loop does after a pass. */
export type LoopVerdict = 'again' | 'done' | 'nothing-to-trim' | 'out-of-passes';

/**
 * The loop's verdict after the latest pass: `done` when it was within tolerance, `nothing-to-trim` when it
 * was not proven within tolerance but its advice asks for no trim (the readings cannot decide, or every step
 * already reads within the tolerance: another pass would only repeat it), `out-of-passes` when `maxPasses`
 * are done, else `again`.
 *
 * @param rows - The history so far.
 * @param maxPasses - Most passes, integer in [1, 50].
 * @example trimLoopVerdict([], 3) // 'again'
 */
export function trimLoopVerdict(rows: readonly PassRow[], maxPasses: number): LoopVerdict {
  if (!Number.isInteger(maxPasses) || maxPasses < 1 || maxPasses > 50)
    throw new RangeError(`maxPasses must be an integer in [1, 50], got ${maxPasses}`);
  const last = rows[rows.length - 1];
  if (last?.withinTolerance) return 'done';
  if (last !== undefined && !last.trimAdvised) return 'nothing-to-trim';
  return rows.length >= maxPasses ? 'out-of-passes' : 'again';
}
