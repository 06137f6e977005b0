/**
 * `spanmeter analyze FILE.wav`: measure the pitch of a recorded oscillator.
 *
 * Without `--points` it measures one steady tone over the whole file. With `--points V1,V2,…` it analyses a
 * recorded calibration pass (`dsp/recording.ts`): finds the settled steps in order, maps them to the
 * voltages, and prints the error table, the tracking fit and the trim advice.
 */
import { readFileSync, statSync } from 'node:fs';
import { basename } from 'node:path';
import { A4_HZ, nearestNote } from '../dsp/notes.ts';
import { estimatePitch } from '../dsp/pitch.ts';
import type { Hertz, Seconds, Volts } from '../dsp/units.ts';
import {
  analyzeRecording,
  describePlateauSpans,
  recordingToJson,
  type RecordingAnalysisError,
} from '../dsp/recording.ts';
import { decodeWav, pickChannel, type WavDecoded } from '../dsp/wav.ts';
import {
  EXIT_USAGE,
  formatOptionsHelp,
  parseCommandArgs,
  parseIntegerOption,
  parseNumberListOption,
  parseNumberOption,
} from './args.ts';
import { CliError } from './errors.ts';
import {
  describeNoPitch,
  describeWav,
  formatRecordingReport,
  formatStepReport,
  stepsToJson,
  type AnalysisStep,
} from './format.ts';

/** Range accepted for `--a4`, Hz: wide enough for every concert pitch in use, narrow enough to catch typos. */
export const A4_RANGE_HZ: readonly [Hertz, Hertz] = [380, 500];
/** Range accepted for `--points`, V: Eurorack rails are ±12 V (FIELD-NOTES), so no control voltage lies beyond. */
export const POINTS_RANGE_V: readonly [Volts, Volts] = [-15, 15];
/** Range accepted for `--settle`, s. */
export const SETTLE_RANGE_S: readonly [Seconds, Seconds] = [0, 60];
/** Highest channel number accepted by `--channel`: the most a WAV `fmt ` chunk can declare (a 16-bit field). */
const MAX_CHANNEL = 65535;

const OPTIONS = {
  channel: { type: 'string', value: 'N', help: 'channel to analyse, counted from 1 (default 1)' },
  a4: { type: 'string', value: 'HZ', help: `tuning reference for note names (default 440, ISO 16:1975)` },
  json: { type: 'boolean', help: 'print one JSON object on stdout instead of the report' },
  points: {
    type: 'string',
    value: 'V1,V2,…',
    help: 'control voltages of a recorded calibration pass, in the order played',
  },
  settle: {
    type: 'string',
    value: 'SECONDS',
    help: 'time each step must hold still before it is measured (default 0.5)',
  },
} as const;

/** Parsed, validated options of `spanmeter analyze`. */
export interface AnalyzeOptions {
  /** Path of the WAV file. */
  readonly file: string;
  /** Channel to analyse, counted from 1. */
  readonly channel: number;
  /** Tuning reference, Hz. */
  readonly a4Hz: Hertz;
  /** Print JSON instead of the report. */
  readonly json: boolean;
  /** Control voltages of a multi-step run, V, in the order they were played; undefined for one tone. */
  readonly points?: readonly Volts[];
  /** Settling time per step, s; undefined when not given. */
  readonly settleSeconds?: Seconds;
}

/** Usage text of the command. */
export const ANALYZE_USAGE = `usage: spanmeter analyze FILE.wav [options]

Measures the pitch of a steady tone recorded from an oscillator: frequency, nearest
equal-tempered note (middle C = C4), cents from it, and the reading's uncertainty.

With --points it analyses a calibration pass instead: the oscillator stepped through
the listed control voltages (1 V/oct), each held until it settles. It finds the
settled steps in order, one per voltage, and prints the error table, the tracking
fit (octaves per volt, scale error) and which trimmer to turn.

options:
${formatOptionsHelp(OPTIONS)}

Reads 8/16/24/32-bit PCM and 32/64-bit float WAV files at 8000-384000 Hz.
Exit status: 0 on a result, 1 when the file cannot be read, holds no pitch or its settled
steps do not match --points, 2 on misuse.

Recording: a modular oscillator's audio (about 10 V peak to peak) overloads a line
input; attenuate it first, keep phantom power off, and follow your interface's manual.`;

/**
 * Parse and check the arguments of `spanmeter analyze`.
 *
 * @returns The options, or `'help'` when `--help` was given.
 * @throws CliError (exit code 2) on misuse, with a one-line message.
 * @example parseAnalyzeArgs(['vco.wav', '--channel', '2']) // { file: 'vco.wav', channel: 2, a4Hz: 440, json: false }
 */
export function parseAnalyzeArgs(args: readonly string[]): AnalyzeOptions | 'help' {
  const { values, positionals, help } = parseCommandArgs('analyze', args, OPTIONS);
  if (help) return 'help';
  if (positionals.length === 0) {
    throw new CliError('missing the WAV file to analyse: spanmeter analyze FILE.wav [options]', EXIT_USAGE);
  }
  if (positionals.length > 1) {
    throw new CliError(
      `expected one WAV file, got ${positionals.length}: ${positionals.map((p) => `'${p}'`).join(', ')}`,
      EXIT_USAGE,
    );
  }
  const channel =
    values.channel === undefined ? 1 : parseIntegerOption('channel', values.channel, 1, MAX_CHANNEL);
  const a4Hz = values.a4 === undefined ? A4_HZ : parseNumberOption('a4', values.a4, ...A4_RANGE_HZ, 'Hz');
  const points =
    values.points === undefined
      ? undefined
      : parseNumberListOption('points', values.points, ...POINTS_RANGE_V, 'V');
  const settleSeconds =
    values.settle === undefined
      ? undefined
      : parseNumberOption('settle', values.settle, ...SETTLE_RANGE_S, 's');
  if (settleSeconds !== undefined && points === undefined) {
    throw new CliError('--settle applies only to a multi-step run: give --points too', EXIT_USAGE);
  }
  return { file: positionals[0], channel, a4Hz, json: values.json === true, points, settleSeconds };
}

/**
 * Read and decode a WAV file from disk.
 *
 * @param path - File path as typed.
 * @throws CliError (exit code 1) when the file is missing, a directory, unreadable or not a readable WAV.
 */
export function readWavFile(path: string): WavDecoded {
  let bytes: Uint8Array;
  try {
    if (statSync(path).isDirectory()) throw new CliError(`'${path}' is a directory, not a WAV file`);
    bytes = readFileSync(path);
  } catch (err) {
    if (err instanceof CliError) throw err;
    const code = (err as NodeJS.ErrnoException).code;
    if (code === 'ENOENT') throw new CliError(`no such file: '${path}'`);
    if (code === 'EACCES' || code === 'EPERM') throw new CliError(`cannot read '${path}': permission denied`);
    if (code === 'EISDIR') throw new CliError(`'${path}' is a directory, not a WAV file`);
    if (code === 'ENOTDIR')
      throw new CliError(`no such file: '${path}' (a part of the path is not a directory)`);
    throw new CliError(`cannot read '${path}': ${(err as Error).message}`);
  }
  const decoded = decodeWav(bytes);
  if (decoded.kind === 'error') throw new CliError(`${path}: ${decoded.message}`);
  return decoded;
}

/**
 * Measure one steady tone over the whole of a channel.
 *
 * @param samples - The channel, normalised to ±1.
 * @param sampleRateHz - Sample rate, Hz.
 * @param a4Hz - Tuning reference for the note name, Hz.
 * @throws CliError (exit code 1) when the channel is digital silence or the engine finds no pitch, with
 *   the engine's reason.
 */
export function measureSteadyTone(samples: Float32Array, sampleRateHz: Hertz, a4Hz: Hertz): AnalysisStep {
  if (samples.every((x) => x === 0)) {
    throw new CliError('no pitch: the channel holds only digital silence (every sample is 0)');
  }
  const reading = estimatePitch(samples, sampleRateHz);
  if (reading.kind === 'none') throw new CliError(describeNoPitch(reading));
  return { volts: null, reading, note: nearestNote(reading.hz, a4Hz), a4Hz };
}

/**
 * The one-line message for a recording that gave no analysis. A plateau-count mismatch names how many
 * settled steps were found, when, and how many voltages `--points` lists.
 *
 * @example describeRecordingError(mismatch)
 * // 'found 4 plateaus (at 0.6–2.0 s, 2.8–4.1 s, 5.0–6.3 s, 7.2–8.5 s) but --points lists 5 voltages: …'
 */
export function describeRecordingError(err: RecordingAnalysisError): string {
  if (err.code !== 'plateau-count-mismatch') return err.message;
  const n = err.plateaus.length;
  return (
    `found ${n} plateau${n === 1 ? '' : 's'} (at ${describePlateauSpans(err.plateaus)}) but --points lists ` +
    `${err.expected} voltage${err.expected === 1 ? '' : 's'}: each voltage needs its own settled step, ` +
    'held still for at least the settle time'
  );
}

/**
 * Run `spanmeter analyze` with the arguments after the command name.
 *
 * Writes the report (or, with `--json`, exactly one JSON line) to stdout; errors are thrown as
 * {@link CliError} for the dispatcher to print on stderr, so nothing reaches stdout on failure.
 *
 * @returns The exit code (0).
 */
export async function main(args: string[]): Promise<number> {
  const opts = parseAnalyzeArgs(args);
  if (opts === 'help') {
    process.stdout.write(`${ANALYZE_USAGE}\n`);
    return 0;
  }
  const decoded = readWavFile(opts.file);
  const picked = pickChannel(decoded, opts.channel);
  if (picked.kind === 'error') throw new CliError(`${opts.file}: ${picked.message}`);
  if (opts.points !== undefined) {
    const analysis = analyzeRecording(picked.samples, decoded.sampleRateHz, {
      points: opts.points,
      a4Hz: opts.a4Hz,
      ...(opts.settleSeconds === undefined ? {} : { settleSeconds: opts.settleSeconds }),
    });
    if (analysis.kind === 'error') throw new CliError(describeRecordingError(analysis));
    if (opts.json) {
      process.stdout.write(`${JSON.stringify(recordingToJson(analysis))}\n`);
    } else {
      const header = describeWav(basename(opts.file), decoded, opts.channel);
      process.stdout.write(`${header}\n${formatRecordingReport(analysis)}\n`);
    }
    return 0;
  }
  const steps = [measureSteadyTone(picked.samples, decoded.sampleRateHz, opts.a4Hz)];

  if (opts.json) {
    process.stdout.write(`${stepsToJson(steps)}\n`);
  } else {
    const header = describeWav(basename(opts.file), decoded, opts.channel);
    process.stdout.write(`${header}\n${steps.map(formatStepReport).join('\n\n')}\n`);
  }
  return 0;
}
