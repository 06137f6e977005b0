/**
 * `spanmeter analyze FILE.wav`: measure the pitch of a recorded oscillator.
 *
 * Without `--points` it measures one steady tone over the whole file. With `--points V1,V2,…` it analyses a
 * recorded calibration pass (`dsp/recording/recording.ts`): finds the settled steps in order, maps them to the
 * voltages, and prints the error table, the tracking fit and the trim advice. `--clock-ppm` corrects every
 * frequency for the interface's clock error, `--fit-from`/`--fit-to` narrow the fit, and `--divider` or
 * `--summer` describe the input network for resistor values in the scale advice. With `--true-hz` it
 * reads a recorded reference tone of known frequency and prints the interface's clock error instead.
 */
import { basename } from 'node:path';
import type { InputNetwork } from '../dsp/advice/index.ts';
import { clockPpmFromReference, MAX_CLOCK_PPM } from '../dsp/io/index.ts';
import { A4_HZ, nearestNote } from '../dsp/math/index.ts';
import { estimatePitch } from '../dsp/pitch/index.ts';
import { MAX_CONTROL_VOLTS } from '../dsp/calibration/index.ts';
import { calibrate } from '../dsp/calibration/index.ts';
import { resultToJsonText } from '../dsp/calibration/index.ts';
import type { Hertz, Ppm, Seconds, Volts } from '../dsp/math/index.ts';
import {
  analyzeRecording,
  describePlateauSpans,
  type RecordingAnalysisError,
} from '../dsp/recording/index.ts';
import { arraySource, wavChannelSource, type SampleSource } from '../dsp/recording/index.ts';
import { analyzeSteadyTone, LONG_TONE_SECONDS } from '../dsp/recording/index.ts';
import type { WavDecoded, WavLayout } from '../dsp/io/index.ts';
import {
  EXIT_USAGE,
  formatOptionsHelp,
  parseCommandArgs,
  parseIntegerOption,
  parsePlanOption,
  parseNumberOption,
  parseResistorPairOption,
} from './args.ts';
import { CliError, quotePath } from './errors.ts';
import { MODEL_OPTIONS, parseModelOptions, type ModelCliOptions } from './model-options.ts';
import { progressLine } from './progress.ts';
import { formatMovingTone, movingToneToJson } from './tone-report.ts';
import { openWavFile, type OpenWavFile } from './wav-file.ts';
import {
  clockReferenceToJson,
  describeClockCorrection,
  describeNoPitch,
  describeWav,
  formatClockReference,
  formatRecordingReport,
  formatStepReport,
  type AnalysisStep,
} from './format.ts';

/** Range accepted for `--a4`, Hz: wide enough for every concert pitch in use, narrow enough to catch typos. */
export const A4_RANGE_HZ: readonly [Hertz, Hertz] = [380, 500];
/** Range accepted for `--settle`, s. */
export const SETTLE_RANGE_S: readonly [Seconds, Seconds] = [0, 60];
/** Range accepted for `--true-hz`, Hz: any tone a sound card can record. */
export const TRUE_HZ_RANGE: readonly [Hertz, Hertz] = [1, 100_000];
/** Highest channel number accepted by `--channel`: the most a WAV `fmt ` chunk can declare (a 16-bit field). */
const MAX_CHANNEL = 65535;

const OPTIONS = {
  channel: { type: 'string', value: 'N', help: 'channel to analyse, counted from 1 (default 1)' },
  a4: { type: 'string', value: 'HZ', help: `tuning reference for note names (default 440, ISO 16:1975)` },
  json: { type: 'boolean', help: 'print one JSON object on stdout instead of the report' },
  points: {
    type: 'string',
    value: 'VOLTS',
    help: 'control voltages of a recorded calibration pass, in the order played (e.g. 0-7 or 0:0.5:5)',
  },
  settle: {
    type: 'string',
    value: 'SECONDS',
    help: 'time each step must hold still before it is measured (default 0.5)',
  },
  'clock-ppm': {
    type: 'string',
    value: 'PPM',
    help: `interface clock error, −${MAX_CLOCK_PPM} to ${MAX_CLOCK_PPM} ppm (+ = fast): corrects every Hz`,
  },
  'true-hz': {
    type: 'string',
    value: 'HZ',
    help: 'true Hz of a recorded reference tone: prints the clock error in ppm',
  },
  'fit-from': { type: 'string', value: 'V', help: 'lowest control voltage the fit and advice use' },
  'fit-to': { type: 'string', value: 'V', help: 'highest control voltage the fit and advice use' },
  pivot: {
    type: 'string',
    value: 'V',
    help: 'voltage the scale trimmer turns about, if known: the offset is then set on that step',
  },
  divider: {
    type: 'string',
    value: 'SERIES,SHUNT',
    help: 'input network, a divider: series and shunt ohms (e.g. 100k,1.8k)',
  },
  summer: {
    type: 'string',
    value: 'INPUT,FEEDBACK',
    help: 'input network, an inverting summer: input and feedback ohms',
  },
  ...MODEL_OPTIONS,
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
  /** Interface clock error, ppm (positive = fast); undefined when not given. */
  readonly clockPpm?: Ppm;
  /** True frequency of a recorded reference tone, Hz: measure the clock error instead. */
  readonly trueHz?: Hertz;
  /** Fit range, V (inclusive); undefined when not given. */
  readonly fitFromVolts?: Volts;
  readonly fitToVolts?: Volts;
  /** The voltage the scale trimmer turns about, V; undefined when not given. */
  readonly scalePivotVolts?: Volts;
  /** The input network, for resistor values in the scale advice. */
  readonly network?: InputNetwork;
  /** Meter readings per step, the budget's options and the tolerance (`cli/model-options.ts`). */
  readonly model?: ModelCliOptions;
}

/** Usage text of the command. */
export const ANALYZE_USAGE = `usage: spanmeter analyze FILE.wav [options]

Measures the pitch of a steady tone recorded from an oscillator: frequency, nearest
equal-tempered note (middle C = C4), cents from it, and the reading's uncertainty.

With --points it analyses a calibration pass instead: the oscillator stepped through
the listed control voltages (1 V/oct), each held until it settles. It finds the
settled steps in order, one per voltage, and prints the error table, the tracking
fit (octaves per volt, scale error) and which trimmer to turn. --fit-from and --fit-to
narrow the fit to a range of voltages; --divider or --summer describe the network from
the 1 V/oct input to the converter, for resistor values that would correct the scale.
--pivot names the voltage the scale trimmer turns about (the step that holds still while
you turn it), when you know it: the offset is then set on that step, which later scale
trims leave in place. Without it the offset is set on the middle step.

Every figure comes from one model: a line plus, where the steps support it, an HF term
(an equivalent reset time) and a low-end term, chosen by AICc. A step that disagrees
with the others by more than 5 combined σ and 3 cents is flagged suspect-voltage and
left out. Each figure carries a GUM budget: give the meter readings with --measured and
the meter with --meter, or the source accuracy of nominal voltages; --tolerance judges
every step as within only when its error plus its expanded uncertainty is inside.

--clock-ppm corrects every frequency for the interface's clock error; intervals, and so
the scale, are not affected by it. To measure that error, record a reference tone of
known frequency and run: spanmeter analyze ref.wav --true-hz 1000

options:
${formatOptionsHelp(OPTIONS)}

Reads 8/16/24/32-bit PCM and 32/64-bit float WAV files (RIFF, or RF64/BW64 over 4 GB)
at 8000-384000 Hz, of any length, a block at a time. Without --points, a tone that moved
during the file, or one longer than a minute, is reported by its drift: start, end and
rate, each with its uncertainty.
Exit status: 0 on a result, 1 when the file cannot be read, holds no pitch, its settled
steps do not match --points or fail a plausibility gate (pitch falling as the volts rise,
a scale far from 1 V/oct), 2 on misuse.

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
  const points = values.points === undefined ? undefined : parsePlanOption('points', values.points);
  const settleSeconds =
    values.settle === undefined
      ? undefined
      : parseNumberOption('settle', values.settle, ...SETTLE_RANGE_S, 's');
  if (settleSeconds !== undefined && points === undefined) {
    throw new CliError('--settle applies only to a multi-step run: give --points too', EXIT_USAGE);
  }
  const clockPpm =
    values['clock-ppm'] === undefined
      ? undefined
      : parseNumberOption('clock-ppm', values['clock-ppm'], -MAX_CLOCK_PPM, MAX_CLOCK_PPM, 'ppm');
  const trueHz =
    values['true-hz'] === undefined
      ? undefined
      : parseNumberOption('true-hz', values['true-hz'], ...TRUE_HZ_RANGE, 'Hz');
  const fitFromVolts =
    values['fit-from'] === undefined
      ? undefined
      : parseNumberOption('fit-from', values['fit-from'], -MAX_CONTROL_VOLTS, MAX_CONTROL_VOLTS, 'V');
  const fitToVolts =
    values['fit-to'] === undefined
      ? undefined
      : parseNumberOption('fit-to', values['fit-to'], -MAX_CONTROL_VOLTS, MAX_CONTROL_VOLTS, 'V');
  if (fitFromVolts !== undefined && fitToVolts !== undefined && fitFromVolts > fitToVolts) {
    throw new CliError(
      `--fit-from (${fitFromVolts} V) must not be above --fit-to (${fitToVolts} V)`,
      EXIT_USAGE,
    );
  }
  const scalePivotVolts =
    values.pivot === undefined
      ? undefined
      : parseNumberOption('pivot', values.pivot, -MAX_CONTROL_VOLTS, MAX_CONTROL_VOLTS, 'V');
  if (values.divider !== undefined && values.summer !== undefined) {
    throw new CliError('give one input network: --divider or --summer, not both', EXIT_USAGE);
  }
  let network: InputNetwork | undefined;
  if (values.divider !== undefined) {
    const [seriesOhms, shuntOhms] = parseResistorPairOption('divider', values.divider, ['SERIES', 'SHUNT']);
    network = { topology: 'divider', seriesOhms, shuntOhms };
  } else if (values.summer !== undefined) {
    const [inputOhms, feedbackOhms] = parseResistorPairOption('summer', values.summer, ['INPUT', 'FEEDBACK']);
    network = { topology: 'inverting-summer', inputOhms, feedbackOhms };
  }
  if (points === undefined) {
    const runOnly = (
      [
        ['fit-from', fitFromVolts],
        ['fit-to', fitToVolts],
        ['pivot', scalePivotVolts],
        ['divider', values.divider],
        ['summer', values.summer],
      ] as const
    ).find(([, v]) => v !== undefined);
    if (runOnly) {
      throw new CliError(`--${runOnly[0]} applies only to a multi-step run: give --points too`, EXIT_USAGE);
    }
  }
  const model = parseModelOptions(values, points);
  if (trueHz !== undefined && points !== undefined) {
    throw new CliError(
      '--true-hz reads one reference tone, not a multi-step run: leave out --points',
      EXIT_USAGE,
    );
  }
  if (trueHz !== undefined && clockPpm !== undefined) {
    throw new CliError('--true-hz measures the clock error, so it takes no --clock-ppm', EXIT_USAGE);
  }
  return {
    file: positionals[0],
    channel,
    a4Hz,
    json: values.json === true,
    points,
    settleSeconds,
    ...(clockPpm === undefined ? {} : { clockPpm }),
    ...(trueHz === undefined ? {} : { trueHz }),
    ...(fitFromVolts === undefined ? {} : { fitFromVolts }),
    ...(fitToVolts === undefined ? {} : { fitToVolts }),
    ...(scalePivotVolts === undefined ? {} : { scalePivotVolts }),
    ...(network === undefined ? {} : { network }),
    ...(points === undefined ? {} : { model }),
  };
}

/**
 * Open a WAV file on disk and pick a channel, reading nothing but the header.
 *
 * @param path - File path as typed.
 * @param channel - Channel number, counted from 1.
 * @throws CliError (exit code 1) when the file is missing, not a regular file, unreadable, not a readable
 *   WAV, or has no such channel.
 */
export function openChannel(path: string, channel: number): { file: OpenWavFile; source: SampleSource } {
  const file = openWavFile(path);
  const count = file.layout.channelCount;
  if (channel > count) {
    file.close();
    const range = count === 1 ? 'only channel 1' : `${count} channels, numbered 1 to ${count}`;
    throw new CliError(`${quotePath(path)}: no channel ${channel}: the file has ${range}`);
  }
  return { file, source: wavChannelSource(file.bytes, file.layout, channel - 1) };
}

/** The header line's view of a file (`describeWav` takes the decoded shape; only its header fields are read). */
function asDecoded(layout: WavLayout): WavDecoded {
  return { ...layout, channels: [] };
}

/** Frames of a source, read into memory (callers keep this to short stretches). */
function readAll(source: SampleSource, start = 0, count = source.frameCount - start): Float32Array {
  const out = new Float32Array(Math.max(0, count));
  const n = source.read(start, out);
  return n === out.length ? out : out.subarray(0, n);
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
  const { file, source } = openChannel(opts.file, opts.channel);
  try {
    return analyzeOpened(opts, file.layout, source);
  } finally {
    file.close();
  }
}

/** `analyze` on an opened file: a calibration pass, a clock reference, or one held tone. */
function analyzeOpened(opts: AnalyzeOptions, layout: WavLayout, source: SampleSource): number {
  const decoded = asDecoded(layout);
  const progress = progressLine(`spanmeter analyze: reading ${basename(opts.file)}`);
  if (opts.points !== undefined) {
    const analysis = analyzeRecording(
      source,
      layout.sampleRateHz,
      {
        points: opts.points,
        a4Hz: opts.a4Hz,
        ...(opts.settleSeconds === undefined ? {} : { settleSeconds: opts.settleSeconds }),
        ...(opts.clockPpm === undefined ? {} : { clockPpm: opts.clockPpm }),
        ...(opts.fitFromVolts === undefined ? {} : { fitFromVolts: opts.fitFromVolts }),
        ...(opts.fitToVolts === undefined ? {} : { fitToVolts: opts.fitToVolts }),
        ...(opts.scalePivotVolts === undefined ? {} : { scalePivotVolts: opts.scalePivotVolts }),
        ...(opts.network === undefined ? {} : { network: opts.network }),
        ...(opts.model?.measuredVolts === undefined ? {} : { measuredVolts: opts.model.measuredVolts }),
        ...(opts.model === undefined ? {} : { budget: opts.model.budget }),
        ...(opts.model?.toleranceCents === undefined ? {} : { toleranceCents: opts.model.toleranceCents }),
      },
      (f) => progress.update(f),
    );
    progress.done();
    if (analysis.kind === 'error') throw new CliError(describeRecordingError(analysis));
    // Steps that fail a plausibility gate (wrong order, volts in the wrong unit) never end in a trim.
    const refusal = analysis.result.fit?.refusal;
    if (refusal) throw new CliError(`no trim advised: ${refusal.message}`);
    if (opts.json) {
      process.stdout.write(`${resultToJsonText(analysis.result)}\n`);
    } else {
      const header = describeWav(basename(opts.file), decoded, opts.channel);
      process.stdout.write(`${header}\n${formatRecordingReport(analysis)}\n`);
    }
    return 0;
  }
  const fs = layout.sampleRateHz;
  if (opts.trueHz !== undefined) {
    // A reference tone: its middle minute at most, measured as one window.
    const n = Math.min(source.frameCount, Math.round(LONG_TONE_SECONDS * fs));
    const samples = readAll(source, Math.floor((source.frameCount - n) / 2), n);
    const measured = measureSteadyTone(samples, fs, opts.a4Hz);
    const clock = clockPpmFromReference(measured.reading.hz, opts.trueHz);
    if (clock.kind === 'none') {
      throw new CliError(
        `the tone reads ${measured.reading.hz.toFixed(3)} Hz, ${Math.round(clock.ppm)} ppm from ` +
          `${opts.trueHz} Hz: more than any interface clock is off (±${MAX_CLOCK_PPM} ppm); check --true-hz, ` +
          'the reference and the sample-rate setting',
      );
    }
    const report = { measuredHz: measured.reading.hz, trueHz: opts.trueHz, clock, reading: measured.reading };
    if (opts.json) {
      process.stdout.write(`${JSON.stringify(clockReferenceToJson(report))}\n`);
    } else {
      const header = describeWav(basename(opts.file), decoded, opts.channel);
      process.stdout.write(`${header}\n${formatClockReference(report)}\n`);
    }
    return 0;
  }
  // A single tone goes through the one pipeline too (the clock correction is applied there).
  const ppm = opts.clockPpm ?? 0;
  // One held tone. A short one is read whole and, when it held still, measured as one window; a long one,
  // or one that moved, is reported through its drift: start, end, rate and their uncertainties.
  const short = layout.durationSeconds <= LONG_TONE_SECONDS;
  const samples = short ? readAll(source) : null;
  const tone = analyzeSteadyTone(samples ? arraySource(samples, fs) : source, {
    onProgress: (f) => progress.update(f),
  });
  progress.done();
  if (tone.kind === 'error' && (samples === null || tone.message.startsWith('only a DC level'))) {
    throw new CliError(tone.message);
  }
  if (tone.kind === 'ok' && tone.moving) {
    if (opts.json) {
      process.stdout.write(`${JSON.stringify(movingToneToJson(tone, opts.a4Hz, ppm))}\n`);
    } else {
      const header = describeWav(basename(opts.file), decoded, opts.channel);
      const clockLine = ppm === 0 ? '' : `${describeClockCorrection(ppm)}\n`;
      process.stdout.write(`${header}\n${clockLine}${formatMovingTone(tone, opts.a4Hz, ppm)}\n`);
    }
    return 0;
  }
  const measured = measureSteadyTone(samples ?? new Float32Array(0), fs, opts.a4Hz);
  const r = measured.reading;
  const { result } = calibrate(
    [
      {
        index: 0,
        volts: null,
        measuredVolts: null,
        rawHz: r.hz,
        uncertaintyCents: r.uncertaintyCents,
        // A window that held a break in the signal says so (each side was fitted with its own phase).
        flags: (r.breaks ?? 0) > 0 ? ['spans-break'] : [],
        capture: {
          source: 'window',
          startSeconds: 0,
          endSeconds: layout.durationSeconds,
          windowStartSeconds: null,
          windowEndSeconds: null,
          harmonicsUsed: r.harmonicsUsed,
          clarity: r.clarity,
          rmsDbfs: Number.isFinite(r.level.rmsDbfs) ? r.level.rmsDbfs : null,
          peakDbfs: Number.isFinite(r.level.peakDbfs) ? r.level.peakDbfs : null,
        },
      },
    ],
    { a4Hz: opts.a4Hz, clockPpm: ppm },
  );
  const hz = result.steps[0].hz;
  const steps = [{ ...measured, reading: { ...r, hz }, note: nearestNote(hz, opts.a4Hz) }];

  if (opts.json) {
    process.stdout.write(`${resultToJsonText(result)}\n`);
  } else {
    const header = describeWav(basename(opts.file), decoded, opts.channel);
    const clockLine = ppm === 0 ? '' : `${describeClockCorrection(ppm)}\n`;
    process.stdout.write(`${header}\n${clockLine}${steps.map(formatStepReport).join('\n\n')}\n`);
  }
  return 0;
}
