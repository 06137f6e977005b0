/**
 * Pieces the benchmark's cases share: how a table of results is printed, where the command-line bundle is, the
 * 15 s stereo stepped recording that the whole-file and as-a-user cases both time, and the bare pitchy pass they
 * are compared with.
 */
import { existsSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { findDemoUnit, planSchedule, renderOscillator } from '../../dsp/sim/index.ts';
import { encodeWav } from '../../cli/simulate.ts';

/** Prints one table of results in Markdown, columns padded to their widest cell, under a `###` title. */
export function table(title: string, header: string[], rows: string[][]): void {
  const widths = header.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i].length)));
  const line = (cells: string[]) => '| ' + cells.map((c, i) => c.padEnd(widths[i])).join(' | ') + ' |';
  console.log(`\n### ${title}\n`);
  console.log(line(header));
  console.log('|' + widths.map((w) => '-'.repeat(w + 2)).join('|') + '|');
  for (const r of rows) console.log(line(r));
}

/**
 * The command-line bundle the process-level cases run (`build/cli/spanmeter.mjs`). `scripts/bench.mjs` builds it
 * before the benchmark starts and passes its path in `SPANMETER_CLI_BUNDLE`.
 *
 * @throws Error when the bundle is missing (the benchmark was started some other way).
 */
export function cliBundle(): string {
  const path = process.env.SPANMETER_CLI_BUNDLE ?? join(process.cwd(), 'build', 'cli', 'spanmeter.mjs');
  if (!existsSync(path))
    throw new Error(`the command-line bundle ${path} is missing: run the benchmark with npm run bench`);
  return path;
}

/** The 15 s stereo stepped recording the speed cases time: demo unit ol3-0417, 0–4 V, 16-bit. */
export interface SteppedRecording {
  readonly file: string;
  readonly seconds: number;
  readonly points: readonly number[];
}

/**
 * Writes the 15 s stereo 16-bit stepped recording (0–4 V, 2.9 s holds, 45 dB SNR, 50 Hz hum at −35 dB) into
 * `dir` and says where it is.
 */
export function writeSteppedRecording(dir: string): SteppedRecording {
  const points = [0, 1, 2, 3, 4];
  const unit = findDemoUnit('ol3-0417');
  const sim = renderOscillator(
    { ...unit?.options, snrDb: 45, humHz: 50, humDb: -35, seed: 7 },
    planSchedule(points, { holdSeconds: 2.9, glideSeconds: 0.15 }),
  );
  const file = join(dir, 'steps-15s-stereo.wav');
  writeFileSync(file, encodeWav(sim.samples, sim.sampleRateHz, '16', 2));
  return { file, seconds: sim.samples.length / sim.sampleRateHz, points };
}

/**
 * The reference the whole-file cases are compared with, as the source of an ES module: a bare pass of pitchy
 * over one channel of the WAV named by its first argument (wavefile decode of the whole file, 8192-sample
 * windows at 20 per second), nothing else. Run it as `node --input-type=module -e SOURCE FILE`, or from a file
 * inside the project (so that `pitchy` and `wavefile` resolve).
 */
export const BARE_PITCHY_PASS = `import { readFileSync } from 'node:fs';
import wavefile from 'wavefile';
import { PitchDetector } from 'pitchy';
const w = new wavefile.WaveFile(readFileSync(process.argv.at(-1)));
const fs = w.fmt.sampleRate;
const ch = w.getSamples(false, Float32Array)[0].map((v) => v / 32768);
const det = PitchDetector.forFloat32Array(8192);
let n = 0;
for (let i = 8192; i <= ch.length; i += fs / 20) { det.findPitch(ch.subarray(i - 8192, i), fs); n++; }
if (n === 0) process.exit(3);
`;
