// Reliability soak: two hours of simulated audio through the live path, run faster than real time in a
// child `node --expose-gc` (so the heap can be measured after forced collections), on an esbuild bundle of
// test/soak-run.ts. The choices that keep it lean (22 050 Hz, 10 readings/s, a mid frequency) are listed
// there. SPANMETER_SOAK_SECONDS sets a longer (or, for a quick look, shorter) stretch of audio.
//
// What must hold, and where the targets come from:
// - memory flat: the heap after a forced GC stays within 5 % of where it settled after the first 10 minutes
//   (the target; common practice for a leak check, no source);
// - no NaN anywhere in any reading or in the run's state;
// - readings still on target at the end: every settled capture within 0.05 cent of the simulator's own truth
//   (dsp/sim/simulate.ts trueHz: the project's capture target, no outside source), and the live readings of the
//   last 10 minutes no worse than those of the first 10.
import { spawn } from 'node:child_process';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { build } from 'esbuild';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

const root = path.resolve(import.meta.dirname, '../..');
const AUDIO_SECONDS = Number(process.env.SPANMETER_SOAK_SECONDS ?? 7200);

interface Figures {
  audioSeconds: number;
  wallSeconds: number;
  speedTimesRealTime: number;
  readings: number;
  okReadings: number;
  nanReadings: number;
  nanInRunState: number;
  runsFinished: number;
  captures: number;
  hostCaptures: number;
  liveMeanCaptures: number;
  worstCaptureCents: number;
  worstCaptureCentsAtEnd: number;
  worstLiveCentsFirst: number;
  worstLiveCentsEnd: number;
  rmsLiveCentsFirst: number;
  rmsLiveCentsEnd: number;
  heapAtSettleBytes: number;
  heapAtEndBytes: number;
  heapMinAfterSettleBytes: number;
  heapMaxAfterSettleBytes: number;
  rssAtEndBytes: number;
  autosaves: number;
  maxAutosaveBytes: number;
  heapSamples: Array<[number, number]>;
}

let dir: string;
let bundle: string;

beforeAll(async () => {
  dir = await mkdtemp(path.join(tmpdir(), 'spanmeter-soak-'));
  bundle = path.join(dir, 'soak-run.mjs');
  await build({
    absWorkingDir: root,
    entryPoints: ['test/soak-run.ts'],
    bundle: true,
    platform: 'node',
    format: 'esm',
    target: 'node20',
    outfile: bundle,
    logLevel: 'warning',
  });
});

afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

function runChild(): Promise<{ code: number | null; stdout: string; stderr: string }> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ['--expose-gc', bundle, String(AUDIO_SECONDS)], {
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (d: Buffer) => (stdout += d.toString()));
    child.stderr.on('data', (d: Buffer) => (stderr += d.toString()));
    child.on('error', reject);
    child.on('close', (code) => resolve({ code, stdout, stderr }));
  });
}

const MiB = 1024 * 1024;

describe('soak: hours of simulated audio through tracker and run', () => {
  it(`${AUDIO_SECONDS / 3600} h of audio: memory flat, no NaN, captures on target at the end`, async () => {
    const { code, stdout, stderr } = await runChild();
    expect(code, stderr).toBe(0);
    const f = JSON.parse(stdout.trim().split('\n').at(-1) ?? '{}') as Figures;
    const drift = (f.heapAtEndBytes - f.heapAtSettleBytes) / f.heapAtSettleBytes;
    console.log(
      [
        `[soak] ${(f.audioSeconds / 3600).toFixed(2)} h of audio in ${f.wallSeconds.toFixed(1)} s ` +
          `(${f.speedTimesRealTime.toFixed(0)}× real time)`,
        `[soak] heap after GC: ${(f.heapAtSettleBytes / MiB).toFixed(2)} MiB at 10 min, ` +
          `${(f.heapAtEndBytes / MiB).toFixed(2)} MiB at the end (${(100 * drift).toFixed(2)} %), ` +
          `range after settling ${(f.heapMinAfterSettleBytes / MiB).toFixed(2)}–${(f.heapMaxAfterSettleBytes / MiB).toFixed(2)} MiB, ` +
          `rss ${(f.rssAtEndBytes / MiB).toFixed(0)} MiB`,
        `[soak] ${f.readings} readings (${f.okReadings} with a pitch), ${f.nanReadings} with NaN, ` +
          `${f.nanInRunState} run states with a non-finite number`,
        `[soak] ${f.runsFinished} runs finished, ${f.captures} captures (${f.hostCaptures} settled averages, ` +
          `${f.liveMeanCaptures} live means), worst capture error ${f.worstCaptureCents.toFixed(4)} cent ` +
          `(${f.worstCaptureCentsAtEnd.toFixed(4)} in the last 10 min)`,
        `[soak] live readings on a held voltage: worst ${f.worstLiveCentsFirst.toFixed(4)} / RMS ` +
          `${f.rmsLiveCentsFirst.toFixed(4)} cent in the first 10 min, worst ${f.worstLiveCentsEnd.toFixed(4)} / RMS ` +
          `${f.rmsLiveCentsEnd.toFixed(4)} cent in the last 10 min`,
        `[soak] ${f.autosaves} autosave round trips, largest saved run ${(f.maxAutosaveBytes / 1024).toFixed(1)} kB`,
      ].join('\n'),
    );

    expect(f.audioSeconds).toBeGreaterThanOrEqual(AUDIO_SECONDS);
    // No NaN, ever.
    expect(f.nanReadings).toBe(0);
    expect(f.nanInRunState).toBe(0);
    expect(f.okReadings / f.readings).toBeGreaterThan(0.99);
    // Memory flat after settling: within 5 % at the end and at every minute on the way.
    expect(Math.abs(drift)).toBeLessThan(0.05);
    expect(f.heapMaxAfterSettleBytes).toBeLessThan(1.05 * f.heapAtSettleBytes);
    // The run kept going the whole time (one semitone run takes about half a minute).
    expect(f.captures).toBeGreaterThan(AUDIO_SECONDS / 5);
    // Every 10 s the run went through its autosave and on from what was read back; the saved state stays
    // small (its log is capped at 50 notes, the plateau detector at a fixed look-back).
    expect(f.autosaves).toBeGreaterThan((0.9 * f.readings) / 100);
    expect(f.maxAutosaveBytes).toBeLessThan(256 * 1024);
    expect(f.hostCaptures / f.captures).toBeGreaterThan(0.95);
    // On target, start to end.
    expect(f.worstCaptureCents).toBeLessThan(0.05);
    expect(f.worstCaptureCentsAtEnd).toBeLessThan(0.05);
    expect(f.worstLiveCentsEnd).toBeLessThan(0.1); // the live target of test/stream.test.ts
    expect(f.rmsLiveCentsEnd).toBeLessThan(1.5 * f.rmsLiveCentsFirst + 0.001);
  }, 900_000);
});
