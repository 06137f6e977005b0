/**
 * The command-line options of the uncertainty budget and the tolerance (`spanmeter analyze --points …`):
 * meter specification, measured voltages per step, source accuracy, clock uncertainty, temperature and the
 * tolerance in cents. Parsed into the `dsp/model/budget.ts` options; every bad value gets a one-line message
 * naming the option.
 */
import { METER_PRESETS, type BudgetOptions, type MeterSpec } from '../dsp/model/index.ts';
import { MAX_CONTROL_VOLTS } from '../dsp/calibration/index.ts';
import type { Volts } from '../dsp/math/index.ts';
import { EXIT_USAGE, parseNumberListOption, parseNumberOption } from './args.ts';
import { CliError } from './errors.ts';

/** The option specifications, to spread into a command's own. */
export const MODEL_OPTIONS = {
  measured: {
    type: 'string',
    value: 'V1,V2,…',
    help: 'meter readings at the input jack, one per --points voltage: the fit uses them',
  },
  meter: {
    type: 'string',
    value: 'SPEC',
    help: "the meter: 3.5, 4.5 or 5.5 digits, or '%,COUNTS,RESOLUTION_V' (default 4.5: ±(0.05 % + 3))",
  },
  'source-accuracy': {
    type: 'string',
    value: '%[,mV]',
    help: 'accuracy of the voltages given without --measured (default 0.1 %)',
  },
  'clock-uncertainty': {
    type: 'string',
    value: 'PPM',
    help: 'standard uncertainty of the interface clock, ppm (default 29: ±50 ppm, rectangular)',
  },
  temperature: {
    type: 'string',
    value: 'C,±K[,PPM/K]',
    help: "temperature during the run and its spread (e.g. '24,0.5'); optional scale tempco",
  },
  tolerance: {
    type: 'string',
    value: 'CENTS',
    help: 'tolerance over the range in use; a step passes only if |error| + U is inside (default 1)',
  },
} as const;

/** What {@link parseModelOptions} returns. */
export interface ModelCliOptions {
  readonly measuredVolts?: readonly Volts[];
  readonly budget: BudgetOptions;
  readonly toleranceCents?: number;
}

function parts(name: string, text: string, min: number, max: number, what: string): string[] {
  const p = text.split(',').map((s) => s.trim());
  if (p.length < min || p.length > max) {
    throw new CliError(`--${name} must be ${what}, got '${text}'`, EXIT_USAGE);
  }
  return p;
}

/**
 * Parses a meter option: a preset (`3.5`, `4.5`, `5.5`, with or without `-digit`) or a custom
 * `%,COUNTS,RESOLUTION_V` (e.g. `0.05,3,0.0001`).
 *
 * @throws CliError (exit code 2) naming the option and the value.
 * @example parseMeterOption('4.5').percentOfReading // 0.05
 */
export function parseMeterOption(text: string): MeterSpec {
  const t = text.trim().replace(/-?digits?$/, '');
  const preset = (['3.5', '4.5', '5.5'] as const).find((p) => p === t);
  if (preset !== undefined) return METER_PRESETS[`${preset}-digit`];
  const p = parts('meter', text, 3, 3, "3.5, 4.5, 5.5 or '%,COUNTS,RESOLUTION_V' (e.g. 0.05,3,0.0001)");
  const percentOfReading = parseNumberOption('meter', p[0], 0, 10, '% of reading');
  const counts = parseNumberOption('meter', p[1], 0, 1000, 'counts');
  const resolutionVolts = parseNumberOption('meter', p[2], 1e-9, 1, 'V resolution');
  return {
    label: `meter ±(${percentOfReading} % + ${counts} counts) at ${resolutionVolts} V resolution`,
    percentOfReading,
    counts,
    countMax: 1999999,
    resolutionVolts,
  };
}

/**
 * Parses the budget and tolerance options.
 *
 * @param values - The parsed option strings (undefined when absent).
 * @param points - The `--points` voltages, or undefined (these options need them).
 * @throws CliError (exit code 2) with a one-line message naming the option.
 * @example parseModelOptions({ tolerance: '0.5' }, [0, 1, 2]).toleranceCents // 0.5
 */
export function parseModelOptions(
  values: Partial<Record<keyof typeof MODEL_OPTIONS, string | boolean | undefined>>,
  points: readonly Volts[] | undefined,
): ModelCliOptions {
  const str = (k: keyof typeof MODEL_OPTIONS) => {
    const v = values[k];
    return typeof v === 'string' ? v : undefined;
  };
  const given = (Object.keys(MODEL_OPTIONS) as (keyof typeof MODEL_OPTIONS)[]).find(
    (k) => str(k) !== undefined,
  );
  if (points === undefined) {
    if (given !== undefined) {
      throw new CliError(`--${given} applies only to a multi-step run: give --points too`, EXIT_USAGE);
    }
    return { budget: {} };
  }
  let measuredVolts: number[] | undefined;
  const m = str('measured');
  if (m !== undefined) {
    measuredVolts = parseNumberListOption('measured', m, -MAX_CONTROL_VOLTS, MAX_CONTROL_VOLTS, 'V');
    if (measuredVolts.length !== points.length) {
      throw new CliError(
        `--measured must give one reading per --points voltage (${points.length}), got ${measuredVolts.length}`,
        EXIT_USAGE,
      );
    }
  }
  const budget: {
    -readonly [K in keyof BudgetOptions]: BudgetOptions[K];
  } = {};
  const meter = str('meter');
  if (meter !== undefined) budget.meter = parseMeterOption(meter);
  const src = str('source-accuracy');
  if (src !== undefined) {
    const p = parts('source-accuracy', src, 1, 2, "'%' or '%,mV' (e.g. 0.1 or 0.1,1)");
    budget.source = {
      percentOfReading: parseNumberOption('source-accuracy', p[0], 0, 10, '%'),
      offsetVolts: p.length > 1 ? parseNumberOption('source-accuracy', p[1], 0, 1000, 'mV') / 1000 : 0,
    };
  }
  const clock = str('clock-uncertainty');
  if (clock !== undefined)
    budget.clockUncertaintyPpm = parseNumberOption('clock-uncertainty', clock, 0, 1000, 'ppm');
  const temp = str('temperature');
  if (temp !== undefined) {
    const p = parts('temperature', temp, 2, 3, "'C,±K' or 'C,±K,PPM_PER_K' (e.g. 24,0.5)");
    budget.temperature = {
      celsius: parseNumberOption('temperature', p[0], -40, 100, '°C'),
      halfWidthKelvin: parseNumberOption('temperature', p[1].replace(/^±/, ''), 0, 50, 'K'),
      ...(p.length > 2
        ? { scaleTempcoPpmPerKelvin: parseNumberOption('temperature', p[2], 0, 10000, 'ppm/K') }
        : {}),
    };
  }
  const tol = str('tolerance');
  const toleranceCents =
    tol === undefined ? undefined : parseNumberOption('tolerance', tol, 0.01, 100, 'cents');
  return {
    ...(measuredVolts === undefined ? {} : { measuredVolts }),
    budget,
    ...(toleranceCents === undefined ? {} : { toleranceCents }),
  };
}
