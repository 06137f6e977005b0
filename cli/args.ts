/**
 * A small, strict argument parser for Spanmeter's commands, built on `node:util` `parseArgs`, with one-line
 * messages for unknown options, missing values and bad values.
 */
import { parseArgs } from 'node:util';
import { parseOhms } from '../dsp/converter/index.ts';
import { parsePlan } from '../dsp/calibration/index.ts';
import { CliError } from './errors.ts';

/**
 * Exit code for a command used wrongly (unknown option, bad value, missing argument). 2 follows the usual
 * practice of POSIX utilities, which exit > 1 for usage errors (common practice, no single source).
 */
export const EXIT_USAGE = 2;

/** Exit code for an internal error: EX_SOFTWARE from BSD's sysexits.h. */
export const EXIT_INTERNAL = 70;

/** One option of a command. */
export interface OptionSpec {
  /** `boolean` for a flag, `string` for an option that takes a value. */
  readonly type: 'boolean' | 'string';
  /** Placeholder for the value in help and messages, e.g. `N` or `HZ`. */
  readonly value?: string;
  /** One line for the help text. */
  readonly help: string;
}

export type OptionSpecs = Readonly<Record<string, OptionSpec>>;

/** The parsed values: booleans for flags, strings (unparsed) for options with values. */
export type ParsedValues<S extends OptionSpecs> = {
  [K in keyof S]?: S[K]['type'] extends 'boolean' ? boolean : string;
};

/** The outcome of {@link parseCommandArgs}. */
export interface ParsedArgs<S extends OptionSpecs> {
  readonly values: ParsedValues<S>;
  readonly positionals: string[];
  /** True when `--help` or `-h` was given (every command takes it). */
  readonly help: boolean;
}

function optionList(specs: OptionSpecs): string {
  return Object.entries(specs)
    .map(([name, s]) => (s.type === 'string' ? `--${name} ${s.value ?? 'VALUE'}` : `--${name}`))
    .concat('--help')
    .join(', ');
}

/** A number-like value after a string option (`--points -1,0,1`), which parseArgs would call ambiguous. */
const NUMBER_LIKE = /^-[\d.]/;

/**
 * Parse a command's arguments strictly: unknown options, options given twice, a missing value, or a value
 * given to a flag are errors with one-line messages. Values of string options that start with a minus sign
 * and look like numbers (`--points -1,0,1`) are taken as values.
 *
 * @param command - Command name for messages, e.g. `analyze`.
 * @param args - The arguments after the command name.
 * @param specs - The options the command takes (`--help` is added).
 * @throws CliError (exit code {@link EXIT_USAGE}) on any misuse.
 * @example parseCommandArgs('analyze', ['a.wav', '--json'], { json: { type: 'boolean', help: '…' } })
 * // { values: { json: true }, positionals: ['a.wav'], help: false }
 */
export function parseCommandArgs<S extends OptionSpecs>(
  command: string,
  args: readonly string[],
  specs: S,
): ParsedArgs<S> {
  // Join `--opt -3` into `--opt=-3` for string options, so negative numbers need no `=`.
  const joined: string[] = [];
  for (let i = 0; i < args.length; i++) {
    const a = args[i];
    if (a === '--') {
      joined.push(...args.slice(i));
      break;
    }
    const spec = a.startsWith('--') && !a.includes('=') ? specs[a.slice(2)] : undefined;
    if (spec?.type === 'string' && i + 1 < args.length && NUMBER_LIKE.test(args[i + 1])) {
      joined.push(`${a}=${args[i + 1]}`);
      i++;
    } else {
      joined.push(a);
    }
  }

  const options: Record<string, { type: 'boolean' | 'string'; short?: string }> = {
    help: { type: 'boolean', short: 'h' },
  };
  for (const [name, s] of Object.entries(specs)) options[name] = { type: s.type };

  let parsed: ReturnType<typeof parseArgs>;
  try {
    parsed = parseArgs({ args: joined, options, allowPositionals: true, strict: true, tokens: true });
  } catch (err) {
    throw new CliError(explainParseError(err, command, specs), EXIT_USAGE);
  }

  const seen = new Set<string>();
  for (const t of parsed.tokens ?? []) {
    if (t.kind !== 'option') continue;
    if (seen.has(t.name)) throw new CliError(`option --${t.name} is given more than once`, EXIT_USAGE);
    seen.add(t.name);
    if (options[t.name].type === 'string' && (t.value === undefined || t.value === '')) {
      const placeholder = specs[t.name]?.value ?? 'VALUE';
      throw new CliError(`option --${t.name} needs a value: --${t.name} ${placeholder}`, EXIT_USAGE);
    }
  }
  const { help, ...values } = parsed.values as Record<string, string | boolean | undefined>;
  return { values: values as ParsedValues<S>, positionals: parsed.positionals, help: help === true };
}

function explainParseError(err: unknown, command: string, specs: OptionSpecs): string {
  const e = err as { code?: string; message?: string };
  const message = e.message ?? String(err);
  const quoted = /'(-[^' ]*)/.exec(message)?.[1] ?? '';
  const name = quoted.replace(/^-+/, '');
  const spec = specs[name];
  switch (e.code) {
    case 'ERR_PARSE_ARGS_UNKNOWN_OPTION':
      return `unknown option '${quoted}'; ${command} takes ${optionList(specs)}`;
    case 'ERR_PARSE_ARGS_INVALID_OPTION_VALUE':
      if (/does not take an argument/.test(message)) return `option --${name} takes no value`;
      return `option --${name} needs a value: --${name} ${spec?.value ?? 'VALUE'}`;
    default:
      return message.split('\n')[0];
  }
}

/**
 * Parse an integer option value.
 *
 * @param name - Option name without dashes, for messages.
 * @param text - The value as typed.
 * @param min - Smallest allowed value. @param max - Largest allowed value.
 * @throws CliError (exit code {@link EXIT_USAGE}) naming the option, the value and the range.
 * @example parseIntegerOption('channel', '2', 1, 64) // 2
 */
export function parseIntegerOption(name: string, text: string, min: number, max: number): number {
  const v = /^[+-]?\d+$/.test(text.trim()) ? Number(text) : NaN;
  if (!Number.isSafeInteger(v) || v < min || v > max) {
    throw new CliError(`--${name} must be a whole number from ${min} to ${max}, got '${text}'`, EXIT_USAGE);
  }
  return v;
}

/**
 * Parse a decimal number option value (plain or exponent notation; no hex, no `Infinity`).
 *
 * @param name - Option name without dashes. @param text - The value as typed.
 * @param min - Smallest allowed value. @param max - Largest allowed value.
 * @param unit - Unit for the message, e.g. `Hz`.
 * @throws CliError (exit code {@link EXIT_USAGE}) naming the option, the value and the range.
 * @example parseNumberOption('a4', '442', 380, 500, 'Hz') // 442
 */
export function parseNumberOption(name: string, text: string, min: number, max: number, unit = ''): number {
  const v = parseDecimal(text);
  if (v === undefined || v < min || v > max) {
    const u = unit ? ` ${unit}` : '';
    throw new CliError(`--${name} must be a number from ${min} to ${max}${u}, got '${text}'`, EXIT_USAGE);
  }
  return v;
}

/**
 * Parse a comma-separated list of numbers, e.g. `--points -1,0,1,2`.
 *
 * @param name - Option name without dashes. @param text - The value as typed.
 * @param min - Smallest allowed value. @param max - Largest allowed value.
 * @param unit - Unit for the message, e.g. `V`.
 * @throws CliError (exit code {@link EXIT_USAGE}) naming the option and the bad item.
 * @example parseNumberListOption('points', '-1,0,1.5', -20, 20, 'V') // [-1, 0, 1.5]
 */
export function parseNumberListOption(
  name: string,
  text: string,
  min: number,
  max: number,
  unit = '',
): number[] {
  const items = text.split(',').map((s) => s.trim());
  const u = unit ? ` ${unit}` : '';
  return items.map((item, i) => {
    const v = parseDecimal(item);
    if (v === undefined || v < min || v > max) {
      const what = item === '' ? 'an empty item' : `'${item}'`;
      throw new CliError(
        `--${name} must be a comma-separated list of numbers from ${min} to ${max}${u}; item ${i + 1} is ${what}`,
        EXIT_USAGE,
      );
    }
    return v;
  });
}

/**
 * Parse two resistances separated by a comma, e.g. `--divider 100k,1.8k` (`dsp/converter/eseries.ts` parseOhms:
 * plain ohms, a `k` or `M` suffix, or the `4k02` form).
 *
 * @param name - Option name without dashes. @param text - The value as typed.
 * @param labels - What the two values are, for the message, e.g. `['SERIES', 'SHUNT']`.
 * @throws CliError (exit code {@link EXIT_USAGE}) naming the option and the bad item.
 * @example parseResistorPairOption('divider', '100k,1.8k', ['SERIES', 'SHUNT']) // [100000, 1800]
 */
export function parseResistorPairOption(
  name: string,
  text: string,
  labels: readonly [string, string],
): [number, number] {
  const items = text.split(',');
  const usage = `--${name} ${labels.join(',')} takes two resistances in ohms (e.g. 100k,1.8k)`;
  if (items.length !== 2) {
    throw new CliError(`${usage}, got ${items.length === 1 ? 'one' : items.length}: '${text}'`, EXIT_USAGE);
  }
  const values = items.map((item, i) => {
    const r = parseOhms(item);
    if (r.kind === 'error') throw new CliError(`${usage}; ${labels[i]} ${r.message}`, EXIT_USAGE);
    return r.ohms;
  });
  return [values[0], values[1]];
}

function parseDecimal(text: string): number | undefined {
  const t = text.trim();
  if (!/^[+-]?(\d+\.?\d*|\.\d+)(e[+-]?\d+)?$/i.test(t)) return undefined;
  const v = Number(t);
  return Number.isFinite(v) ? v : undefined;
}

/**
 * The option lines of a command's help text, aligned.
 *
 * @example formatOptionsHelp({ json: { type: 'boolean', help: 'print JSON' } }) // '  --json      print JSON\n  --help …'
 */
export function formatOptionsHelp(specs: OptionSpecs): string {
  const rows = Object.entries(specs).map(([name, s]) => [
    s.type === 'string' ? `--${name} ${s.value ?? 'VALUE'}` : `--${name}`,
    s.help,
  ]);
  rows.push(['-h, --help', 'show this help']);
  const width = Math.max(...rows.map(([l]) => l.length)) + 2;
  return rows.map(([l, h]) => `  ${l.padEnd(width)}${h}`).join('\n');
}

/**
 * Parse a list of control voltages in the one plan grammar (`dsp/calibration/plan.ts` parsePlan: `0,1,2`, `0-7`,
 * `0:0.5:5`), as `analyze --points` and `simulate --plan` take it: one voltage or more, and a voltage may
 * come back (a recording may return to a step).
 *
 * @param name - Option name without dashes. @param text - The value as typed.
 * @throws CliError (exit code {@link EXIT_USAGE}) naming the option and what is wrong.
 * @example parsePlanOption('points', '0:0.5:2') // [0, 0.5, 1, 1.5, 2]
 */
export function parsePlanOption(name: string, text: string): number[] {
  const r = parsePlan(text, { minPoints: 1, allowRepeats: true });
  if (r.kind === 'error') throw new CliError(`--${name}: ${r.message}`, EXIT_USAGE);
  return [...r.volts];
}
