/**
 * `spanmeter simulate`: writes a test recording of a simulated 1 V/oct oscillator stepped through a list of
 * reference voltages, as a WAV file, with the true settled frequency of every step in an optional JSON file.
 *
 * The oscillator and interface model is `dsp/sim/simulate.ts`. Files are written atomically: to a temporary file
 * in the destination folder, then linked (or, with `--force`, renamed) into place, so a reader never sees
 * half a file. An existing file is replaced only with `--force`; a directory, FIFO, device, socket or
 * symbolic link is never a target, with or without it. The targets are checked before anything is rendered.
 */
import { randomBytes } from 'node:crypto';
import { lstatSync, type Stats } from 'node:fs';
import { link, lstat, rename, rm, writeFile } from 'node:fs/promises';
import { basename, dirname, join, resolve } from 'node:path';
import wavefile from 'wavefile';
import {
  DEFAULT_OSCILLATOR_OPTIONS,
  OSCILLATOR_SHAPES,
  demoUnits,
  findDemoUnit,
  planSchedule,
  renderOscillator,
  resolveOscillatorOptions,
  type OscillatorOptions,
  type OscillatorShape,
  type RenderedOscillator,
} from '../dsp/sim/index.ts';
import {
  EXIT_USAGE,
  formatOptionsHelp,
  parseCommandArgs,
  parseIntegerOption,
  parseNumberOption,
  parsePlanOption,
  type OptionSpecs,
} from './args.ts';
import { CliError, quotePath } from './errors.ts';

/** Defaults of a recording made by this command (the oscillator's own defaults are in dsp/sim/simulate.ts). */
export const SIMULATE_DEFAULTS = Object.freeze({
  /** Reference voltages: 0 to 7 V in whole volts. */
  plan: '0-7',
  holdSeconds: 3,
  glideSeconds: 0.15,
  shape: 'saw' as OscillatorShape,
  sampleRateHz: 48_000,
  /** Interface self-noise, dB below the signal. */
  snrDb: 45,
  humHz: 50,
  /** Hum power, dB relative to the signal. */
  humDb: -35,
  /** 16-bit integer PCM, the most widely readable format. */
  bits: '16' as WavBits,
  /** Mono. */
  channels: 1,
  seed: 1,
});

/** Sample formats the command writes: 16- or 24-bit integer PCM, or 32-bit float. */
export type WavBits = '16' | '24' | '32f';

const SPECS = {
  out: { type: 'string', value: 'FILE.wav', help: 'write the recording here (required)' },
  plan: {
    type: 'string',
    value: 'VOLTS',
    help: `reference voltages: a list, ranges such as 0-7, stepped ranges such as 0:0.5:5 (default ${SIMULATE_DEFAULTS.plan})`,
  },
  hold: {
    type: 'string',
    value: 'SECONDS',
    help: `hold per step (default ${SIMULATE_DEFAULTS.holdSeconds})`,
  },
  glide: {
    type: 'string',
    value: 'SECONDS',
    help: `glide between steps (default ${SIMULATE_DEFAULTS.glideSeconds})`,
  },
  unit: {
    type: 'string',
    value: 'ID',
    help: `start from a demo unit: ${demoUnits.map((u) => u.id).join(', ')}`,
  },
  shape: { type: 'string', value: 'SHAPE', help: `${OSCILLATOR_SHAPES.join('|')} (default saw)` },
  width: { type: 'string', value: 'FRACTION', help: 'pulse width, 0.01 to 0.99 (default 0.25)' },
  rate: { type: 'string', value: 'HZ', help: `sample rate (default ${SIMULATE_DEFAULTS.sampleRateHz})` },
  snr: {
    type: 'string',
    value: 'DB',
    help: `interface noise, dB below the signal, or off (default ${SIMULATE_DEFAULTS.snrDb})`,
  },
  hum: {
    type: 'string',
    value: '50|60|off',
    help: `mains hum frequency (default ${SIMULATE_DEFAULTS.humHz})`,
  },
  'hum-db': {
    type: 'string',
    value: 'DB',
    help: `hum level relative to the signal (default ${SIMULATE_DEFAULTS.humDb})`,
  },
  'scale-error': {
    type: 'string',
    value: 'CENTS_PER_OCT',
    help: 'scale error, cents per octave (default 0)',
  },
  'reset-us': { type: 'string', value: 'MICROSECONDS', help: 'reset time of the core (default 0)' },
  hz0: { type: 'string', value: 'HZ', help: `frequency at 0 V (default ${DEFAULT_OSCILLATOR_OPTIONS.hz0})` },
  bits: { type: 'string', value: '16|24|32f', help: 'sample format (default 16)' },
  channels: { type: 'string', value: '1|2', help: 'channels; with 2 both carry the signal (default 1)' },
  truth: { type: 'string', value: 'FILE.json', help: 'also write the true settled frequency of every step' },
  force: { type: 'boolean', help: 'replace --out and --truth files that already exist' },
  seed: { type: 'string', value: 'N', help: `seed of the noise (default ${SIMULATE_DEFAULTS.seed})` },
} as const satisfies OptionSpecs;

/** The help text of `spanmeter simulate`. */
export function simulateUsage(): string {
  return [
    'usage: spanmeter simulate --out FILE.wav [options]',
    '',
    'Writes a recording of a simulated 1 V/oct oscillator stepped through reference voltages,',
    'with glides, thermal tails, interface noise and hum.',
    '',
    'options:',
    formatOptionsHelp(SPECS),
    '',
    'The recording is a sustained tone peaking near -4 dBFS: turn your monitors down before playing it.',
  ].join('\n');
}

function parseChoice<T extends string>(name: string, text: string, choices: readonly T[]): T {
  if (!(choices as readonly string[]).includes(text)) {
    throw new CliError(`--${name} must be one of ${choices.join(', ')}, got '${text}'`, EXIT_USAGE);
  }
  return text as T;
}

/**
 * Integer sample values for a PCM bit depth (full scale 2^(bits−1), clamped to the top code, the same
 * scaling the reader in dsp/io/wav.ts undoes), or the float samples themselves for 32f. No dither: the
 * simulated noise dithers.
 */
function encodeChannel(samples: Float32Array, bits: WavBits): Int16Array | Int32Array | Float32Array {
  if (bits === '32f') return samples;
  const full = bits === '16' ? 32768 : 8388608;
  const out = bits === '16' ? new Int16Array(samples.length) : new Int32Array(samples.length);
  for (let i = 0; i < samples.length; i++) {
    const v = Math.round(samples[i] * full);
    out[i] = v > full - 1 ? full - 1 : v < -full ? -full : v;
  }
  return out;
}

/**
 * A WAV file's bytes for a mono rendering, written with the `wavefile` package.
 *
 * @param samples - Mono samples, −1…1.
 * @param sampleRateHz - Integer sample rate, Hz.
 * @param bits - '16', '24' or '32f'.
 * @param channels - 1, or 2 (the same signal on both).
 * @example encodeWav(new Float32Array(48), 48000, '16', 1).length // 140 (44-byte header + 96 bytes)
 */
export function encodeWav(
  samples: Float32Array,
  sampleRateHz: number,
  bits: WavBits,
  channels: 1 | 2,
): Uint8Array {
  const data = encodeChannel(samples, bits);
  const wav = new wavefile.WaveFile();
  wav.fromScratch(channels, sampleRateHz, bits, channels === 1 ? data : [data, data]);
  return wav.toBuffer();
}

/** What a non-regular file is, for a message; null for a regular file. */
function kindOf(st: Stats): string | null {
  if (st.isFile()) return null;
  if (st.isSymbolicLink()) return 'a symbolic link';
  if (st.isDirectory()) return 'a directory';
  if (st.isFIFO()) return 'a FIFO (named pipe)';
  if (st.isCharacterDevice()) return 'a character device';
  if (st.isBlockDevice()) return 'a block device';
  if (st.isSocket()) return 'a socket';
  return 'not a regular file';
}

/**
 * Checks that `path` may be written: it does not exist, or it is a regular file and `force` is given.
 * The link itself is examined (lstat), so a symbolic link is refused rather than followed.
 *
 * @param path - The target, as typed.
 * @param option - The option that named it (`out`, `truth`), for the message.
 * @param force - `--force` was given.
 * @throws CliError (exit code 1) for a non-regular target, or an existing file without `force`.
 * @example checkWriteTarget('take.wav', 'out', false) // undefined when take.wav does not exist
 */
export function checkWriteTarget(path: string, option: string, force: boolean): void {
  let st: Stats;
  try {
    st = lstatSync(path);
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    if (code === 'ENOENT') return;
    if (code === 'ENOTDIR') {
      throw new CliError(`cannot write ${quotePath(path)}: a part of the path is not a directory`);
    }
    throw new CliError(`cannot write ${quotePath(path)}: ${code ?? String(err)}`);
  }
  const kind = kindOf(st);
  if (kind !== null) {
    throw new CliError(
      `--${option} ${quotePath(path)} is ${kind}; simulate writes only regular files, and never through a link`,
    );
  }
  if (!force) {
    throw new CliError(`--${option} ${quotePath(path)} already exists; add --force to replace it`);
  }
}

/**
 * Writes a file atomically: a temporary file beside it, then a hard link to the target (which fails if
 * the target appeared meanwhile, so nothing is replaced without `force`), or with `force` a rename over
 * the regular file checked before. The temporary file is removed whatever happens.
 */
async function writeFileAtomic(path: string, data: Uint8Array | string, force: boolean): Promise<void> {
  const tmp = join(dirname(path), `.${basename(path)}.${process.pid}.${randomBytes(4).toString('hex')}.tmp`);
  try {
    await writeFile(tmp, data, { flag: 'wx' });
    if (force) {
      const st = await lstat(path).catch(() => null);
      if (st !== null && !st.isFile()) throw new Error(`it became ${kindOf(st)} meanwhile`);
      await rename(tmp, path);
    } else {
      await link(tmp, path);
    }
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    if (code === 'EEXIST') {
      throw new CliError(`${quotePath(path)} appeared while it was being written; add --force to replace it`);
    }
    const reason = code ?? (err instanceof Error ? err.message : String(err));
    throw new CliError(`cannot write ${quotePath(path)}: ${reason}`);
  } finally {
    await rm(tmp, { force: true }).catch(() => undefined);
  }
}

/** Identifies the truth file format. */
export const TRUTH_FORMAT = 'spanmeter-simulated-truth';

/**
 * The truth file's content: what the recording holds and the true settled frequency of every step.
 * Infinite option values (no noise, no hum) are written as null, as JSON has no infinity.
 */
export interface TruthFile {
  readonly format: typeof TRUTH_FORMAT;
  readonly version: 1;
  readonly wav: string;
  readonly sampleRateHz: number;
  readonly bits: WavBits;
  readonly channels: 1 | 2;
  readonly frames: number;
  readonly durationSeconds: number;
  readonly unit: string | null;
  readonly options: Record<string, unknown>;
  readonly steps: RenderedOscillator['truth'];
}

/**
 * Runs `spanmeter simulate` with the arguments after the command name.
 *
 * @returns 0 on success.
 * @throws CliError with a one-line message on a bad argument (exit code 2) or a file that cannot be written (1).
 * @example await main(['--out', 'vco.wav', '--plan', '0-3', '--hold', '1']) // 0
 */
export async function main(args: string[]): Promise<number> {
  const { values, positionals, help } = parseCommandArgs('simulate', args, SPECS);
  if (help) {
    process.stdout.write(`${simulateUsage()}\n`);
    return 0;
  }
  if (positionals.length > 0) {
    throw new CliError(
      `unexpected argument '${positionals[0]}'; give the output file with --out FILE.wav`,
      EXIT_USAGE,
    );
  }
  if (values.out === undefined) throw new CliError('--out FILE.wav is required', EXIT_USAGE);

  const volts = parsePlanOption('plan', values.plan ?? SIMULATE_DEFAULTS.plan);
  const holdSeconds =
    values.hold === undefined
      ? SIMULATE_DEFAULTS.holdSeconds
      : parseNumberOption('hold', values.hold, 0.01, 600, 's');
  const glideSeconds =
    values.glide === undefined
      ? SIMULATE_DEFAULTS.glideSeconds
      : parseNumberOption('glide', values.glide, 0, 10, 's');

  const unit = values.unit === undefined ? undefined : findDemoUnit(values.unit);
  if (values.unit !== undefined && unit === undefined) {
    throw new CliError(
      `--unit must be one of ${demoUnits.map((u) => u.id).join(', ')}, got '${values.unit}'`,
      EXIT_USAGE,
    );
  }
  const bits = parseChoice<WavBits>('bits', values.bits ?? SIMULATE_DEFAULTS.bits, ['16', '24', '32f']);
  const channels =
    values.channels === undefined
      ? SIMULATE_DEFAULTS.channels
      : parseIntegerOption('channels', values.channels, 1, 2);

  let options: OscillatorOptions = {
    ...unit?.options,
    sampleRateHz:
      values.rate === undefined
        ? SIMULATE_DEFAULTS.sampleRateHz
        : parseIntegerOption('rate', values.rate, 8000, 384_000),
    shape:
      values.shape === undefined
        ? (unit?.options.shape ?? SIMULATE_DEFAULTS.shape)
        : parseChoice('shape', values.shape, OSCILLATOR_SHAPES),
    snrDb:
      values.snr === undefined
        ? SIMULATE_DEFAULTS.snrDb
        : values.snr === 'off'
          ? Infinity
          : parseNumberOption('snr', values.snr, -20, 200, 'dB'),
    humHz:
      values.hum === undefined || values.hum === 'off'
        ? SIMULATE_DEFAULTS.humHz
        : Number(parseChoice('hum', values.hum, ['50', '60', 'off'])),
    humDb:
      values.hum === 'off'
        ? -Infinity
        : values['hum-db'] === undefined
          ? SIMULATE_DEFAULTS.humDb
          : values['hum-db'] === 'off'
            ? -Infinity
            : parseNumberOption('hum-db', values['hum-db'], -200, 20, 'dB'),
    seed:
      values.seed === undefined
        ? SIMULATE_DEFAULTS.seed
        : parseIntegerOption('seed', values.seed, 0, 2 ** 32 - 1),
  };
  if (values.width !== undefined)
    options = { ...options, pulseWidth: parseNumberOption('width', values.width, 0.01, 0.99) };
  if (values['scale-error'] !== undefined) {
    const cents = parseNumberOption('scale-error', values['scale-error'], -100, 100, 'cents per octave');
    options = { ...options, scaleOctPerVolt: 1 + cents / 1200 };
  }
  if (values['reset-us'] !== undefined) {
    options = {
      ...options,
      resetSeconds: parseNumberOption('reset-us', values['reset-us'], 0, 100, 'µs') * 1e-6,
    };
  }
  if (values.hz0 !== undefined)
    options = { ...options, hz0: parseNumberOption('hz0', values.hz0, 0.1, 20_000, 'Hz') };

  // The targets are checked before the (possibly long) rendering, so a refusal is immediate.
  const force = values.force === true;
  const outPath = resolve(values.out);
  const truthPath = values.truth === undefined ? undefined : resolve(values.truth);
  if (truthPath === outPath) throw new CliError('--truth must name a different file from --out', EXIT_USAGE);
  checkWriteTarget(values.out, 'out', force);
  if (values.truth !== undefined) checkWriteTarget(values.truth, 'truth', force);

  let rendered: RenderedOscillator;
  try {
    rendered = renderOscillator(options, planSchedule(volts, { holdSeconds, glideSeconds }));
  } catch (err) {
    if (err instanceof RangeError) throw new CliError(err.message, EXIT_USAGE);
    throw err;
  }

  await writeFileAtomic(
    outPath,
    encodeWav(rendered.samples, rendered.sampleRateHz, bits, channels as 1 | 2),
    force,
  );
  if (truthPath !== undefined) {
    const truth: TruthFile = {
      format: TRUTH_FORMAT,
      version: 1,
      wav: basename(outPath),
      sampleRateHz: rendered.sampleRateHz,
      bits,
      channels: channels as 1 | 2,
      frames: rendered.samples.length,
      durationSeconds: rendered.samples.length / rendered.sampleRateHz,
      unit: unit?.id ?? null,
      options: { ...resolveOscillatorOptions(options) },
      steps: rendered.truth,
    };
    await writeFileAtomic(truthPath, `${JSON.stringify(truth, null, 2)}\n`, force);
  }
  const seconds = (rendered.samples.length / rendered.sampleRateHz).toFixed(2);
  const fmt = bits === '32f' ? '32-bit float' : `${bits}-bit`;
  process.stdout.write(
    `wrote ${values.out}: ${volts.length} steps, ${seconds} s, ${rendered.sampleRateHz} Hz, ${fmt}, ${channels} ch` +
      `${truthPath === undefined ? '' : `; truth in ${values.truth}`}\n`,
  );
  return 0;
}
