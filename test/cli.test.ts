import { calibrate } from '../dsp/calibration/index.ts';
import { CalibrationResultSchema, resultToJsonText } from '../dsp/calibration/index.ts';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { spawnSync } from 'node:child_process';
import { chmodSync, existsSync, mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { Midi } from '@tonaljs/tonal';
import { run } from '../cli/main.ts';
import { formatCents, formatHz, formatUncertainty } from '../dsp/format/index.ts';
import { parseAnalyzeArgs } from '../cli/analyze.ts';
import { gaussianNoise, tone } from './signals.ts';
import { cli, cliInProcess, ROOT, type Ran } from './cli-run.ts';
import { tempDir, writeWavFile, type WavDepth } from './helpers/wav.ts';

// In-process runs of `book` hit this stand-in, which fails the way a bug would (`book` itself is tested in
// records-book.test.ts); spawned runs (the real command line, through the bundle) are not affected by vi.mock.
vi.mock('../cli/book.ts', () => ({
  main: async () => {
    throw new Error('simulated bug\nwith a second line');
  },
}));

let dir = '';

/** Expect a failure: exactly one line on stderr, nothing on stdout, the given exit code. */
function expectFailure(r: Ran, code: number, pattern: RegExp): void {
  expect(r.stdout, 'stdout').toBe('');
  expect(r.stderr.endsWith('\n'), `stderr: ${r.stderr}`).toBe(true);
  expect(r.stderr.trimEnd().split('\n'), 'one line on stderr').toHaveLength(1);
  expect(r.stderr.trimEnd()).toMatch(pattern);
  expect(r.code).toBe(code);
}

/** A WAV file of the given channels in the test's folder (the shared writer, test/helpers/wav.ts). */
function writeWav(name: string, channels: Float64Array[], rate: number, depth: WavDepth): string {
  return writeWavFile(join(dir, name), channels, rate, depth);
}

interface JsonStep {
  volts: number | null;
  hz: number;
  uncertaintyCents: number;
  note: string;
  centsFromNote: number;
  [k: string]: unknown;
}

/** Parse `--json` output, checking it is exactly one JSON object on one line, of the one result shape. */
function parseJsonOutput(r: Ran): JsonStep[] {
  expect(r.stderr).toBe('');
  expect(r.code).toBe(0);
  expect(r.stdout.endsWith('\n')).toBe(true);
  expect(r.stdout.trimEnd().split('\n')).toHaveLength(1);
  const parsed = JSON.parse(r.stdout) as { steps: JsonStep[]; a4Hz: number };
  expect(CalibrationResultSchema.safeParse(parsed).success).toBe(true);
  return parsed.steps.map((s) => ({ ...s, a4Hz: parsed.a4Hz }));
}

let files: Record<string, string> = {};

beforeAll(async () => {
  dir = tempDir('cli');
  // Tones at published 12-TET frequencies (A4 = 440 Hz, ISO 16:1975), from tonal's Midi.midiToFreq.
  const c4 = Midi.midiToFreq(60);
  const a2 = Midi.midiToFreq(45);
  // 12.5 cents sharp of A4: 440·2^(12.5/1200) (Ellis, 1885).
  const a4Sharp = 440 * 2 ** (12.5 / 1200);
  files = {
    c4: writeWav('c4.wav', [tone('sine', c4, 48000, 1, { amplitude: 0.5 })], 48000, '16'),
    a2saw24: writeWav('a2-saw.wav', [tone('saw', a2, 96000, 1, { amplitude: 0.4 })], 96000, '24'),
    stereo: writeWav(
      'stereo.wav',
      [new Float64Array(44100), tone('square', a4Sharp, 44100, 1, { amplitude: 0.3 })],
      44100,
      '32f',
    ),
    tuned432: writeWav('a432.wav', [tone('triangle', 432, 48000, 1, { amplitude: 0.5 })], 48000, '16'),
    silence: writeWav('silence.wav', [new Float64Array(48000)], 48000, '16'),
    noise: writeWav('noise.wav', [gaussianNoise(48000, 0.2, 7)], 48000, '16'),
  };
  const good = new Uint8Array(readFileSync(files.c4));
  files.truncated = join(dir, 'truncated.wav');
  writeFileSync(files.truncated, good.subarray(0, 44 + 1200));
  files.headerOnly = join(dir, 'header-only.wav');
  const header = good.slice(0, 44);
  new DataView(header.buffer).setUint32(40, 0, true);
  new DataView(header.buffer).setUint32(4, 36, true);
  writeFileSync(files.headerOnly, header);
  files.mp3 = join(dir, 'take.mp3.wav');
  writeFileSync(files.mp3, Uint8Array.from([0x49, 0x44, 0x33, 4, 0, 0, 0, 0, 0, 0]));
  files.folder = join(dir, 'folder.wav');
  mkdirSync(files.folder);
  // Load the command modules once up front.
  await cliInProcess('analyze', '--help');
});

afterAll(() => {
  if (dir) rmSync(dir, { recursive: true, force: true });
});

describe('spanmeter analyze --json', () => {
  it('prints exactly one JSON object and nothing else; C4 reads as C4 at 0.00 cents', async () => {
    const [step, ...more] = parseJsonOutput(await cliInProcess('analyze', files.c4, '--json'));
    expect(more).toHaveLength(0);
    expect(step.volts).toBeNull();
    expect(step.note).toBe(Midi.midiToNoteName(60, { sharps: true })); // 'C4' (tonal)
    // To a hundredth of a cent of 261.6256 Hz (ISO 16 / tonal), checked in cents (Ellis, 1885).
    expect(Math.abs(1200 * Math.log2(step.hz / Midi.midiToFreq(60)))).toBeLessThan(0.01);
    expect(Math.abs(step.centsFromNote)).toBeLessThan(0.01);
    expect(step.uncertaintyCents).toBeGreaterThan(0);
    expect(step.uncertaintyCents).toBeLessThan(0.01);
  });

  it('a 24-bit saw at A2 (110 Hz) reads as A2', async () => {
    const [step] = parseJsonOutput(await cliInProcess('analyze', files.a2saw24, '--json'));
    expect(step.note).toBe(Midi.midiToNoteName(45, { sharps: true })); // 'A2'
    expect(Math.abs(step.centsFromNote)).toBeLessThan(0.01);
  });

  it('--channel 2 picks the right channel of a stereo file: a square 12.50 cents sharp of A4', async () => {
    const [step] = parseJsonOutput(await cliInProcess('analyze', files.stereo, '--channel', '2', '--json'));
    expect(step.note).toBe('A4');
    expect(step.centsFromNote).toBeCloseTo(12.5, 2);
  });

  it('--a4 432 names notes against 432 Hz; at 440 the same tone is −31.77 cents from A4', async () => {
    const [at432] = parseJsonOutput(await cliInProcess('analyze', files.tuned432, '--a4', '432', '--json'));
    expect(at432.note).toBe('A4');
    expect(Math.abs(at432.centsFromNote)).toBeLessThan(0.01);
    expect(at432.a4Hz).toBe(432);
    const [at440] = parseJsonOutput(await cliInProcess('analyze', files.tuned432, '--json'));
    expect(at440.centsFromNote).toBeCloseTo(1200 * Math.log2(432 / 440), 2); // Ellis, 1885
  });
});

describe('spanmeter analyze (report)', () => {
  it('prints frequency, note, cents, uncertainty (1σ), level and window', async () => {
    const r = await cliInProcess('analyze', files.c4);
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    const out = r.stdout;
    expect(out).toMatch(/^c4\.wav: channel 1 of 1, 48000 Hz, 16-bit PCM, 1\.000 s\n/);
    // Three decimals at 261.6 Hz: 0.001 Hz is 0.0066 cent, the digits a hundredth of a cent needs (Ellis 1885).
    expect(out).toMatch(/^frequency\s+261\.626 Hz$/m);
    expect(out).toMatch(/^note\s+C4 0\.00 cents \(C4 = 261\.626 Hz\)$/m);
    expect(out).toMatch(/^reference\s+A4 = 440 Hz, middle C = C4$/m);
    expect(out).toMatch(/^uncertainty\s+±[\d.]+ cents \(1σ, standard error\), ±[\d.]+ Hz$/m);
    expect(out).toMatch(/^level\s+\u2212\d+\.\d dBFS RMS, \u2212\d+\.\d dBFS peak$/m);
    expect(out).toMatch(/^window\s+1\.000 s, \d+ harmonics?, clarity [01]\.\d{3}$/m);
  });

  it('--help prints the usage on stdout', async () => {
    const r = await cliInProcess('analyze', '--help');
    expect(r.code).toBe(0);
    expect(r.stderr).toBe('');
    expect(r.stdout).toMatch(/^usage: spanmeter analyze FILE\.wav/);
    expect(r.stdout).toContain('--channel N');
  });
});

describe('spanmeter analyze: errors are one line on stderr, nothing on stdout, non-zero exit', () => {
  it.each<[string, string[], number, RegExp]>([
    ['a missing file', ['nope.wav'], 1, /^spanmeter analyze: no such file: '.*nope\.wav'$/],
    ['a directory', ['<folder>'], 1, /^spanmeter analyze: '.*folder\.wav' is a directory, not a WAV file$/],
    ['not a WAV', ['<mp3>'], 1, /: not a WAV file: it starts with 'ID3' \(an MP3 file\) instead of 'RIFF'$/],
    [
      'a truncated file',
      ['<truncated>'],
      1,
      /: truncated: the data chunk declares 96000 bytes but only 1200 are present \(0\.013 s of 1\.000 s\)$/,
    ],
    ['a header with no frames', ['<headerOnly>'], 1, /: empty: the file holds no audio frames$/],
    [
      'digital silence',
      ['<silence>'],
      1,
      /^spanmeter analyze: no pitch: the channel holds only digital silence/,
    ],
    ['noise', ['<noise>'], 1, /^spanmeter analyze: no pitch: /],
    [
      'a channel the file lacks',
      ['<stereo>', '--channel', '3'],
      1,
      /: no channel 3: the file has 2 channels, numbered 1 to 2$/,
    ],
    [
      '--channel 0',
      ['<c4>', '--channel', '0'],
      2,
      /--channel must be a whole number from 1 to 65535, got '0'$/,
    ],
    [
      '--channel x',
      ['<c4>', '--channel', 'x'],
      2,
      /--channel must be a whole number from 1 to 65535, got 'x'$/,
    ],
    ['--channel with no value', ['<c4>', '--channel'], 2, /option --channel needs a value: --channel N$/],
    ['--a4 1000', ['<c4>', '--a4', '1000'], 2, /--a4 must be a number from 380 to 500 Hz, got '1000'$/],
    ['--a4 abc', ['<c4>', '--a4', 'abc'], 2, /--a4 must be a number from 380 to 500 Hz, got 'abc'$/],
    ['--a4 -440', ['<c4>', '--a4', '-440'], 2, /--a4 must be a number from 380 to 500 Hz, got '-440'$/],
    [
      'an unknown option',
      ['<c4>', '--frobnicate'],
      2,
      /unknown option '--frobnicate'; analyze takes --channel N/,
    ],
    ['no file', [], 2, /missing the WAV file to analyse/],
    ['two files', ['<c4>', '<c4>'], 2, /expected one WAV file, got 2/],
    [
      '--points with more voltages than settled steps',
      ['<c4>', '--points', '-1,0,1'],
      1,
      /^spanmeter analyze: found 1 plateau \(at \d+\.\d–\d+\.\d s\) but --points lists 3 voltages: /,
    ],
    [
      'digital silence with --points',
      ['<silence>', '--points', '0,1'],
      1,
      /^spanmeter analyze: silence: every sample of the recording is 0/,
    ],
    [
      'a channel the file lacks, with --points',
      ['<stereo>', '--channel', '3', '--points', '0,1'],
      1,
      /: no channel 3: the file has 2 channels, numbered 1 to 2$/,
    ],
    ['a bad --points list', ['<c4>', '--points', '0,x'], 2, /--points: "x" is neither a voltage/],
    ['--settle alone', ['<c4>', '--settle', '2'], 2, /--settle applies only to a multi-step run/],
  ])('%s', async (_name, args, code, pattern) => {
    const resolved = args.map((a) =>
      a.startsWith('<') ? files[a.slice(1, -1)] : a === 'nope.wav' ? join(dir, a) : a,
    );
    expectFailure(await cliInProcess('analyze', ...resolved), code, pattern);
    // The same with --json: still nothing on stdout.
    if (code === 1) expectFailure(await cliInProcess('analyze', ...resolved, '--json'), code, pattern);
  });

  it.skipIf(process.getuid?.() === 0)(
    'an unreadable file (skipped as root, who can read anything)',
    async () => {
      const p = join(dir, 'locked.wav');
      writeFileSync(p, 'RIFF');
      chmodSync(p, 0o000);
      expectFailure(await cliInProcess('analyze', p), 1, /cannot read '.*locked\.wav': permission denied$/);
    },
  );
});

describe('spanmeter (dispatcher)', () => {
  it('--help lists the commands on stdout', async () => {
    const r = await cliInProcess('--help');
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/^usage: spanmeter <command> \[args\]/);
    for (const c of ['analyze', 'simulate', 'book']) expect(r.stdout).toMatch(new RegExp(`^  ${c} `, 'm'));
  });

  it('no command prints the usage on stderr with exit code 2', async () => {
    const r = await cliInProcess();
    expect(r.code).toBe(2);
    expect(r.stdout).toBe('');
    expect(r.stderr).toMatch(/^usage: spanmeter/);
  });

  it('an unknown command', async () => {
    expectFailure(
      await cliInProcess('frobnicate'),
      2,
      /^spanmeter: unknown command 'frobnicate'; commands are analyze, simulate, book \(see spanmeter --help\)$/,
    );
  });

  it('any other error is an internal error: one line, exit 70, no stack unless SPANMETER_DEBUG=1', async () => {
    const out: string[] = [];
    const err: string[] = [];
    const io = { stdout: (t: string) => void out.push(t), stderr: (t: string) => void err.push(t) };
    const before = process.env.SPANMETER_DEBUG;
    try {
      delete process.env.SPANMETER_DEBUG;
      expect(await run(['book'], io)).toBe(70);
      expect(out).toEqual([]);
      expect(err).toEqual(['spanmeter: internal error: simulated bug with a second line\n']);
      err.length = 0;
      process.env.SPANMETER_DEBUG = '1';
      expect(await run(['book'], io)).toBe(70);
      expect(err[0]).toBe('spanmeter: internal error: simulated bug with a second line\n');
      expect(err[1]).toMatch(/^Error: simulated bug\n/);
    } finally {
      if (before === undefined) delete process.env.SPANMETER_DEBUG;
      else process.env.SPANMETER_DEBUG = before;
    }
  });
});

// The one spawned test of the command line: the real bundle (scripts/run-cli.mjs builds it when stale), started
// as its own process, so the bundling, the entry point's "am I the program" check and the exit code set through
// process.exitCode are covered. Everything else above runs in process through run(), which is the same code.
describe('the real program (spawned smoke test)', () => {
  it('the bundle analyses a file as --json and refuses a missing one with one line and exit 1', () => {
    const [step] = parseJsonOutput(cli('analyze', files.c4, '--json'));
    expect(step.note).toBe(Midi.midiToNoteName(60, { sharps: true })); // 'C4' (tonal)
    expect(Math.abs(step.centsFromNote)).toBeLessThan(0.01);
    expectFailure(
      cli('analyze', join(dir, 'nope.wav')),
      1,
      /^spanmeter analyze: no such file: '.*nope\.wav'$/,
    );
    expectFailure(cli('frobnicate'), 2, /^spanmeter: unknown command 'frobnicate'/);
    // The program itself, started directly, compiles the bundle with the code cache its build made for this
    // Node (scripts/build-cli.mjs); V8 refusing it would only cost time, and the debug switch says so.
    expect(existsSync(join(ROOT, 'build', 'cli', `spanmeter.${process.version}.v8cache`))).toBe(true);
    const direct = spawnSync(process.execPath, [join(ROOT, 'build', 'cli', 'spanmeter.mjs'), '--help'], {
      encoding: 'utf8',
      env: { ...process.env, NODE_OPTIONS: '', SPANMETER_DEBUG: '1' },
    });
    expect(direct.status).toBe(0);
    expect(direct.stdout).toMatch(/^usage: spanmeter <command>/);
    expect(direct.stderr).toBe('');
  }, 120_000);
});

describe('argument parsing (in process)', () => {
  it('defaults: channel 1, A4 = 440 Hz, report', () => {
    expect(parseAnalyzeArgs(['vco.wav'])).toEqual({
      file: 'vco.wav',
      channel: 1,
      a4Hz: 440,
      json: false,
      points: undefined,
      settleSeconds: undefined,
    });
  });

  it('parses --points (negative values need no =) and --settle for the multi-step run', () => {
    expect(parseAnalyzeArgs(['vco.wav', '--points', '-2,-1,0,1.5,+3', '--settle', '0.75'])).toMatchObject({
      points: [-2, -1, 0, 1.5, 3],
      settleSeconds: 0.75,
    });
    expect(parseAnalyzeArgs(['--points=-1,1', 'vco.wav'])).toMatchObject({ points: [-1, 1] });
  });

  it('--help', () => {
    expect(parseAnalyzeArgs(['-h'])).toBe('help');
  });
});

describe('output formatting', () => {
  it('frequency to the digits that resolve a hundredth of a cent (a ratio of 5.78e-6, Ellis 1885)', () => {
    expect(formatHz(261.6255653005986)).toBe('261.626');
    // One unit in the last place, 0.001 Hz at 261.6 Hz, is under 0.01 cent.
    expect(10 ** -3 / 261.6255653005986).toBeLessThan(2 ** (0.01 / 1200) - 1);
  });

  // Signed cents: a true minus (U+2212, ISO 80000-1 7.1.4), no sign on a value that rounds to zero.
  it.each([
    [0, '0.00'],
    [-0.004, '0.00'],
    [-0.005001, '\u22120.01'],
    [3.14159, '+3.14'],
    [-49.999, '\u221250.00'],
  ])('signed cents %f → %s', (c, s) => {
    expect(formatCents(c)).toBe(s);
  });

  // Two significant digits for an uncertainty: JCGM 100:2008 (GUM), 7.2.6.
  it.each([
    [0.0001234, '0.00012'],
    [0.0012, '0.0012'],
    [0.0999, '0.10'], // two significant digits even when rounding carries into the next decade (GUM 7.2.6)
    [2.345, '2.3'],
    [17.2, '17'],
    [0, '0'],
  ])('uncertainty %f → %s', (u, s) => {
    expect(formatUncertainty(u)).toBe(s);
  });

  it('JSON: the one result shape (dsp/calibration/result.ts); non-finite levels become null', () => {
    const { result } = calibrate([
      {
        index: 0,
        volts: null,
        measuredVolts: null,
        rawHz: 440,
        uncertaintyCents: 0.001,
        capture: {
          source: 'window',
          startSeconds: 0,
          endSeconds: 1,
          windowStartSeconds: null,
          windowEndSeconds: null,
          harmonicsUsed: 3,
          clarity: 0.99,
          rmsDbfs: -Infinity,
          peakDbfs: -6,
        },
      },
    ]);
    const text = resultToJsonText(result);
    expect(text.startsWith('{"schemaVersion":2,')).toBe(true);
    const json = JSON.parse(text);
    expect(json.steps[0]).toMatchObject({ volts: null, hz: 440, uncertaintyCents: 0.001, note: 'A4' });
    expect(json.steps[0].capture.rmsDbfs).toBeNull();
  });
});
