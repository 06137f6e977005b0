// `spanmeter analyze` calibration options: --clock-ppm, --true-hz, --fit-from/--fit-to, --divider and
// --summer, run as a user would run them.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { rmSync } from 'node:fs';
import { join } from 'node:path';
import { inputNetworkGain, type InputNetwork, type ResistorChange } from '../dsp/advice/index.ts';
import { planSchedule, renderOscillator } from '../dsp/sim/index.ts';
import { cliInProcess } from './cli-run.ts';
import { tempDir, writeWavFile } from './helpers/wav.ts';

let dir = '';

/** A 16-bit PCM mono WAV in the test's folder (the shared writer, test/helpers/wav.ts). */
function writeWav(name: string, samples: Float32Array, rate: number): string {
  return writeWavFile(join(dir, name), [samples], rate);
}

/**
 * E24 mantissas, IEC 60063:2015 (from memory of the standard's table; eight of them, 27…47 and 82, are
 * not the rounded geometric series, which is why the table is written out).
 */
const IEC_E24 = [
  10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91,
];
/** E96 mantissas: `round(100·10^(i/96))`, i = 0…95, the series' defining formula (IEC 60063:2015). */
const IEC_E96 = Array.from({ length: 96 }, (_, i) => Math.round(100 * Math.pow(10, i / 96)));

/** Whether `ohms` is `mantissa·10^k` for a mantissa of the series (`digits` significant digits). */
function inSeries(ohms: number, mantissas: readonly number[], digits: number): boolean {
  const exp = Math.floor(Math.log10(ohms)) - (digits - 1);
  const m = Math.round((ohms / Math.pow(10, exp)) * 1e6) / 1e6;
  return mantissas.includes(m);
}

/** Cents between two frequencies: 1200·log2(f1/f2) (A. J. Ellis, 1885). */
const cents = (f1: number, f2: number) => 1200 * Math.log2(f1 / f2);

const POINTS = [0, 1, 2, 3, 4, 5, 6];
/** +4 cents per octave: scale 1 + 4/1200 octaves per volt (the 1 V/oct definition, docs/facts.md). */
const SCALE = 1 + 4 / 1200;
const CLOCK_PPM = 37.5;
let pass = '';
let ref = '';

interface Out {
  steps: { volts: number; hz: number; intervalErrorCents: number | null }[];
  fit: { fromVolts: number; toVolts: number; residualsCents: number[]; scaleErrorCentsPerOctave: number };
  advice: { trimmer: string; kind: string; direction: string; resistors: ResistorChange[] | null }[];
}

async function json(...args: string[]): Promise<Out> {
  const r = await cliInProcess('analyze', pass, '--points', POINTS.join(','), '--json', ...args);
  expect(r.stderr).toBe('');
  expect(r.code).toBe(0);
  return JSON.parse(r.stdout) as Out;
}

beforeAll(async () => {
  dir = tempDir('options');
  const rec = renderOscillator(
    { hz0: 55, shape: 'saw', snrDb: 50, humDb: -40, scaleOctPerVolt: SCALE, seed: 31 },
    planSchedule(POINTS, { holdSeconds: 2, glideSeconds: 0.15 }),
  );
  pass = writeWav('pass.wav', rec.samples, rec.sampleRateHz);
  // A 1 kHz reference tone recorded through an interface whose clock runs 37.5 ppm fast.
  const tone = renderOscillator(
    { hz0: 1000, shape: 'sine', snrDb: 60, clockPpm: CLOCK_PPM, seed: 32 },
    planSchedule([0], { holdSeconds: 3 }),
  );
  ref = writeWav('ref.wav', tone.samples, tone.sampleRateHz);
  await cliInProcess('analyze', '--help'); // load the command's modules once, up front
});

afterAll(() => {
  if (dir) rmSync(dir, { recursive: true, force: true });
});

describe('spanmeter analyze: calibration options', () => {
  it('--divider 100k,1.8k: a wide scale asks for less gain, with E24/E96 values of IEC 60063', async () => {
    const out = await json('--divider', '100k,1.8k');
    const scale = out.advice[0];
    expect(scale).toMatchObject({ trimmer: 'scale', kind: 'trim', direction: 'narrow' });
    const network: InputNetwork = { topology: 'divider', seriesOhms: 100e3, shuntOhms: 1.8e3 };
    const gain = inputNetworkGain(network);
    const rs = scale.resistors!;
    expect(rs.map((r) => r.part)).toEqual(['series', 'shunt']);
    for (const r of rs) {
      const changed: InputNetwork =
        r.part === 'series' ? { ...network, seriesOhms: r.toOhms } : { ...network, shuntOhms: r.toOhms };
      // Octaves 4 cents wide: the divider's gain must fall by the factor 1/s (the 1 V/oct definition).
      expect(inputNetworkGain(changed)).toBeLessThan(gain);
      expect(inputNetworkGain(changed) / gain).toBeCloseTo(1 / SCALE, 4);
      expect(inSeries(r.e24.ohms, IEC_E24, 2), `E24 ${r.e24.ohms}`).toBe(true);
      expect(inSeries(r.e96.ohms, IEC_E96, 3), `E96 ${r.e96.ohms}`).toBe(true);
    }
    // Less gain: a larger series resistor or a smaller shunt (Ohm's law for the unloaded divider).
    expect(rs[0].toOhms).toBeGreaterThan(100e3);
    expect(rs[1].toOhms).toBeLessThan(1.8e3);
    // Without a network the field is there and null.
    expect((await json()).advice[0].resistors).toBeNull();

    const human = await cliInProcess('analyze', pass, '--points', POINTS.join(','), '--divider', '100k,1.8k');
    expect(human.code).toBe(0);
    expect(human.stdout).toMatch(/^ {3}resistor: series Rs 100 kΩ → [\d.]+ kΩ exact; E24 [\d.]+ kΩ leaves /m);
    expect(human.stdout).toMatch(/^ {3}resistor: shunt Rsh 1\.8 kΩ → [\d.]+ kΩ exact; .* E96 /m);
  });

  it('--summer 100k,100k: the input resistor grows, the feedback shrinks', async () => {
    const rs = (await json('--summer', '100k,100k')).advice[0].resistors!;
    expect(rs.map((r) => r.part)).toEqual(['input', 'feedback']);
    expect(rs[0].toOhms).toBeGreaterThan(100e3);
    expect(rs[1].toOhms).toBeLessThan(100e3);
  });

  it('--clock-ppm 100 moves every absolute Hz by 100 ppm and leaves the interval errors alone', async () => {
    const plain = await json();
    const fixed = await json('--clock-ppm', '100');
    fixed.steps.forEach((s, i) => {
      expect(s.hz / plain.steps[i].hz - 1).toBeCloseTo(100e-6, 12);
      // docs/facts.md, "The sound card": a clock error scales every frequency alike, so intervals are immune.
      if (i > 0) expect(s.intervalErrorCents!).toBeCloseTo(plain.steps[i].intervalErrorCents!, 9);
    });
    expect(fixed.fit.scaleErrorCentsPerOctave).toBeCloseTo(plain.fit.scaleErrorCentsPerOctave, 9);
    // 100 ppm is 0.173 cent (docs/facts.md).
    expect(cents(fixed.steps[0].hz, plain.steps[0].hz)).toBeCloseTo(0.173, 3);
    const human = await cliInProcess('analyze', pass, '--points', POINTS.join(','), '--clock-ppm', '100');
    expect(human.stdout).toMatch(/^clock\s+corrected by \+100\.000 ppm \(\+0\.1731 cents\)/m);
  });

  it('--fit-from 1 --fit-to 5 fits only those steps', async () => {
    const out = await json('--fit-from', '1', '--fit-to', '5');
    expect(out.fit).toMatchObject({ fromVolts: 1, toVolts: 5 });
    expect(out.fit.residualsCents).toHaveLength(5);
    expect(out.steps).toHaveLength(POINTS.length);
    expect(out.fit.scaleErrorCentsPerOctave).toBeCloseTo(4, 1);
    expect((await json()).fit).toMatchObject({ fromVolts: 0, toVolts: 6 });
  });

  it('--pivot 2: the offset is set on the 2 V step and the result says which pivot the advice assumed', async () => {
    type WithTarget = Omit<Out, 'advice'> & {
      scalePivotVolts?: number;
      advice: { trimmer: string; target?: { volts: number } | null }[];
    };
    const withPivot = (await json('--pivot', '2')) as unknown as WithTarget;
    const plain = (await json()) as unknown as WithTarget;
    expect(withPivot.scalePivotVolts).toBe(2);
    expect(plain.scalePivotVolts).toBeUndefined();
    // A scale trim moves the step at V by δe·(V − pivot) (derived, scalePivotVolts in dsp/advice/advice.ts): the
    // step at the pivot stays put, so the offset is set there.
    expect(withPivot.advice.find((a) => a.trimmer === 'offset')?.target?.volts).toBe(2);
    const refused = await cliInProcess('analyze', pass, '--points', POINTS.join(','), '--pivot', '13');
    expect(refused.stderr).toBe("spanmeter analyze: --pivot must be a number from -12 to 12 V, got '13'\n");
  });

  it('--true-hz recovers a known clock error within 0.5 ppm', async () => {
    const r = await cliInProcess('analyze', ref, '--true-hz', '1000', '--json');
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    const out = JSON.parse(r.stdout) as { clockPpm: number; measuredHz: number; trueHz: number };
    expect(Math.abs(out.clockPpm - CLOCK_PPM), `${out.clockPpm} ppm`).toBeLessThan(0.5);
    expect(out.trueHz).toBe(1000);
    const human = await cliInProcess('analyze', ref, '--true-hz', '1000');
    expect(human.code).toBe(0);
    expect(human.stdout).toMatch(/^clock\s+\+37\.\d{3} ppm ±[\d.]+ \(1σ\): the interface clock runs fast/m);
    expect(human.stdout).toMatch(/^use\s+--clock-ppm 37\.\d{3} /m);
  });

  it.each<[string, string[], RegExp]>([
    [
      'clock out of range',
      ['--clock-ppm', '2000'],
      /^--clock-ppm must be a number from -1000 to 1000 ppm, got '2000'$/,
    ],
    [
      'bad resistor',
      ['--divider', '100k,abc'],
      /^--divider SERIES,SHUNT takes two resistances .*; SHUNT 'abc' is not a resistance: /,
    ],
    [
      'one resistor',
      ['--divider', '100k'],
      /^--divider SERIES,SHUNT takes two resistances in ohms \(e\.g\. 100k,1\.8k\), got one: '100k'$/,
    ],
    ['two networks', ['--divider', '100k,1.8k', '--summer', '100k,100k'], /^give one input network/],
    [
      'reversed range',
      ['--fit-from', '5', '--fit-to', '1'],
      /^--fit-from \(5 V\) must not be above --fit-to \(1 V\)$/,
    ],
    ['true-hz with points', ['--true-hz', '1000'], /^--true-hz reads one reference tone/],
  ])('%s: one line on stderr, exit 2, nothing on stdout', async (_name, extra, message) => {
    const r = await cliInProcess('analyze', pass, '--points', POINTS.join(','), ...extra);
    expect(r.stdout).toBe('');
    expect(r.code).toBe(2);
    const lines = r.stderr.trimEnd().split('\n');
    expect(lines).toHaveLength(1);
    expect(lines[0].replace(/^spanmeter analyze: /, '')).toMatch(message);
  });

  it('run-only options without --points are misuse', async () => {
    const r = await cliInProcess('analyze', ref, '--divider', '100k,1.8k');
    expect([r.code, r.stdout]).toEqual([2, '']);
    expect(r.stderr).toBe(
      'spanmeter analyze: --divider applies only to a multi-step run: give --points too\n',
    );
  });
});
