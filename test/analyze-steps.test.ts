// `spanmeter analyze FILE.wav --points …`: a recorded calibration pass, run as a user would run it.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { rmSync } from 'node:fs';
import { join } from 'node:path';
import { CalibrationResultSchema } from '../dsp/calibration/index.ts';
import { planSchedule, renderOscillator, type RenderedOscillator } from '../dsp/sim/index.ts';
import { cliInProcess } from './cli-run.ts';
import { tempDir, writeWavFile } from './helpers/wav.ts';

let dir = '';

/** Cents between two frequencies: 1200·log2(f1/f2) (A. J. Ellis, 1885). */
const cents = (f1: number, f2: number) => 1200 * Math.log2(f1 / f2);

const POINTS = [0, 1, 2, 3, 4];
let rec: RenderedOscillator;
let stereo = '';

beforeAll(async () => {
  dir = tempDir('steps');
  // A saw stepped through 0–4 V with glides and small overshoots, 45 dB SNR and 50 Hz hum; its scale is
  // 1.002 octaves per volt (+2.4 cents per octave). Channel 1 of the file is silent, channel 2 holds it.
  rec = renderOscillator(
    { hz0: 55, shape: 'saw', snrDb: 45, humDb: -35, scaleOctPerVolt: 1.002, seed: 21 },
    planSchedule(POINTS, { holdSeconds: 2, glideSeconds: 0.15, overshootVolts: 0.05 }),
  );
  stereo = writeWavFile(
    join(dir, 'pass.wav'),
    [new Float32Array(rec.samples.length), rec.samples],
    rec.sampleRateHz,
  );
  await cliInProcess('analyze', '--help'); // load the command's modules once, up front
});

afterAll(() => {
  if (dir) rmSync(dir, { recursive: true, force: true });
});

interface StepJson {
  volts: number;
  hz: number;
  uncertaintyCents: number;
  centsFromIdeal: number;
  intervalErrorCents: number | null;
  capture: { startSeconds: number; endSeconds: number };
  note: string;
  centsFromNote: number;
}

describe('spanmeter analyze --points', () => {
  it('--json: exactly one object {steps, fit, advice}; every step within 0.05 cent of the truth', async () => {
    const r = await cliInProcess('analyze', stereo, '--channel', '2', '--points', POINTS.join(','), '--json');
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    expect(r.stdout.endsWith('\n')).toBe(true);
    expect(r.stdout.trimEnd().split('\n')).toHaveLength(1);
    const out = JSON.parse(r.stdout) as {
      steps: StepJson[];
      fit: Record<string, number>;
      advice: { text: string; trimmer: string }[];
    };
    // The one result shape (dsp/calibration/result.ts), exact.
    expect(CalibrationResultSchema.safeParse(out).success).toBe(true);
    expect(out.steps.map((s) => s.volts)).toEqual(POINTS);
    out.steps.forEach((s, i) => {
      // recordedHz: what a perfect meter reads in the file (dsp/sim/simulate.ts).
      const err = cents(s.hz, rec.truth[i].recordedHz);
      expect(Math.abs(err), `step ${i}: ${err.toFixed(4)} cents`).toBeLessThan(0.05);
      expect(s.uncertaintyCents).toBeGreaterThan(0);
      expect(typeof s.note).toBe('string');
      expect(s.capture.startSeconds).toBeLessThan(s.capture.endSeconds);
      expect(s.centsFromIdeal).toBeTypeOf('number');
      expect(s.intervalErrorCents === null).toBe(i === 0);
      // The 1 V/oct definition (docs/facts.md): each 1 V interval is 1200·1.002 cents, 2.4 cents wide.
      if (i > 0) expect(s.intervalErrorCents!).toBeCloseTo(2.4, 1);
    });
    expect(Math.abs(out.fit.octavesPerVolt - 1.002)).toBeLessThan(2e-4);
    expect(out.fit.scaleErrorCentsPerOctave).toBeCloseTo(2.4, 1);
    expect(out.fit.maxResidualCents).toBeGreaterThanOrEqual(0);
    expect(out.fit.hzAt0V).toBeGreaterThan(0);
    expect(out.advice[0]).toMatchObject({ trimmer: 'scale' });
    expect(out.advice.every((a) => a.text.length > 0)).toBe(true);
  });

  it('the report: aligned table, fit summary, advice and the caution', async () => {
    const r = await cliInProcess('analyze', stereo, '--channel', '2', '--points', POINTS.join(','));
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    const lines = r.stdout.split('\n');
    expect(lines[0]).toMatch(/^pass\.wav: channel 2 of 2, 48000 Hz, 16-bit PCM, \d+\.\d{3} s$/);
    const header = lines.findIndex((l) =>
      /^\s*V\s+Hz\s+note\s+from note\s+from ideal\s+interval error/.test(l),
    );
    expect(header).toBeGreaterThan(0);
    const rows = lines.slice(header + 1, header + 1 + POINTS.length);
    // 55·2^(1.002·V) Hz: A1 at 0 V, A2 at 1 V, … (12-TET, A4 = 440 Hz, ISO 16:1975).
    ['A1', 'A2', 'A3', 'A4', 'A5'].forEach((note, i) => {
      expect(rows[i]).toMatch(
        new RegExp(`^${POINTS[i]}\\.000\\s+\\d+\\.\\d{4}\\s+${note}\\s+[+\u2212]?\\d+\\.\\d\\d\\s`),
      );
    });
    // Aligned: the Hz column ends at the same place on every row, with the decimals the lowest step needs
    // (four at 55 Hz, where 0.0001 Hz is 0.0031 cent; Ellis 1885).
    const hzEnd = rows.map((l) => l.search(/\d+\.\d{4}/) + (l.match(/\d+\.\d{4}/)?.[0].length ?? 0));
    expect(new Set(hzEnd).size).toBe(1);
    expect(r.stdout).toMatch(/^scale\s+1\.002\d{3} octaves per volt: \+2\.\d\d ± [\d.]+ cents per octave/m);
    expect(r.stdout).toMatch(/^1\. \[scale\] /m);
    expect(r.stdout).toMatch(/^caution: .*Never connect a power rail to the sound card input\.$/m);
  });

  it.each([[[]], [['--json']]])(
    'plateau count mismatch %j: one line on stderr, when and how many',
    async (extra) => {
      const r = await cliInProcess('analyze', stereo, '--channel', '2', '--points', '0,1,2,3', ...extra);
      expect(r.stdout).toBe('');
      expect(r.code).toBe(1);
      const err = r.stderr.trimEnd().split('\n');
      expect(err).toHaveLength(1);
      expect(err[0]).toMatch(
        /^spanmeter analyze: found 5 plateaus \(at (\d+\.\d–\d+\.\d s, ){4}\d+\.\d–\d+\.\d s\) but --points lists 4 voltages: /,
      );
      // The times named are the holds of the recording.
      const spans = [...err[0].matchAll(/(\d+\.\d)–(\d+\.\d) s/g)].map((m) => [Number(m[1]), Number(m[2])]);
      spans.forEach(([a, b], i) => {
        expect(a).toBeGreaterThanOrEqual(rec.truth[i].startSeconds - 0.2);
        expect(b).toBeLessThanOrEqual(rec.truth[i].endSeconds + 0.1);
      });
    },
  );

  it('a silent channel: a clear error, nothing on stdout', async () => {
    const r = await cliInProcess('analyze', stereo, '--channel', '1', '--points', POINTS.join(','), '--json');
    expect(r.stdout).toBe('');
    expect(r.code).toBe(1);
    expect(r.stderr).toBe(
      'spanmeter analyze: silence: every sample of the recording is 0 (nothing was recorded)\n',
    );
  });

  it('--settle longer than the holds: no settled steps', async () => {
    const r = await cliInProcess(
      'analyze',
      stereo,
      '--channel',
      '2',
      '--points',
      POINTS.join(','),
      '--settle',
      '5',
    );
    expect(r.stdout).toBe('');
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(
      /^spanmeter analyze: no settled steps: the pitch never stayed within ±0\.3 cent for 5 s/,
    );
  });
});
