/**
 * Pieces the benchmark's process-level cases share: where the command-line bundle is, and the 15 s stereo
 * stepped recording that the whole-file and as-a-user cases both time.
 */
import { existsSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { findDemoUnit, planSchedule, renderOscillator } from '../../dsp/sim/index.ts';
import { encodeWav } from '../../cli/simulate.ts';

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
