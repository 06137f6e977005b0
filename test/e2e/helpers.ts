/**
 * Helpers of the browser end-to-end tests: find Chromium, start `scripts/web.mjs` on a free port, write
 * the stepped recording the fake capture device plays, and read the app's state from the page.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, mkdirSync, rmSync, statSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Page } from 'playwright-core';
import { writeWavFile } from '../helpers/wav.ts';
import {
  planSchedule,
  renderOscillator,
  type OscillatorOptions,
  type StepTruth,
} from '../../dsp/sim/index.ts';

export const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..');
export const ARTIFACTS = path.join(ROOT, 'test-artifacts');
export const CHROMIUM = '/usr/bin/chromium';

/**
 * How many times faster than the clock the app's simulated oscillator runs in these tests (`&pace=` in the
 * address, renderer/src/lib/params.ts). The engine times everything in samples, so what the tests check is
 * the same at any pace; only the waiting is shorter. `SPANMETER_SIM_PACE=1` gives real time (the drive
 * benchmark, and anyone watching a run). If the machine cannot keep up, the simulator falls behind the
 * clock instead of dropping audio, so nothing here depends on the machine's speed.
 */
export const SIM_PACE = Number(process.env.SPANMETER_SIM_PACE ?? 8);

/**
 * The address's query for the simulated oscillator at the tests' pace, plus `rest` (`&unit=…`). A test
 * that acts while a run is still going (a fault mid-run) passes `pace` 1: at real time the run cannot
 * finish before the test's action lands, however busy the machine.
 */
export function simQuery(rest = '', pace = SIM_PACE): string {
  return `?input=sim&pace=${pace}${rest}`;
}

/** Launch arguments for Debian's Chromium in a container with a fake audio capture device. */
export function chromiumArgs(fakeAudioFile?: string): string[] {
  return [
    '--no-sandbox',
    '--disable-gpu',
    '--disable-background-networking',
    '--disable-component-update',
    '--disable-sync',
    '--no-first-run',
    '--use-fake-ui-for-media-stream',
    '--use-fake-device-for-media-stream',
    ...(fakeAudioFile ? [`--use-file-for-fake-audio-capture=${fakeAudioFile}`] : []),
  ];
}

/**
 * Whether the browser tests can run: true with Chromium present. Without it they are skipped, except on
 * CI (`CI=true`), where a missing browser is a failure.
 */
export function chromiumAvailable(): boolean {
  if (existsSync(CHROMIUM)) return true;
  if (process.env.CI === 'true') {
    throw new Error(`${CHROMIUM} is missing: CI must install Debian's chromium package (see .ci/run)`);
  }
  console.warn(`e2e: skipped, ${CHROMIUM} is missing (apt-get install chromium)`);
  return false;
}

/** A running `npm run web`. */
export interface WebServer {
  readonly url: string;
  stop(): Promise<void>;
}

/**
 * Held while one test file's server may be building the renderer, so that files started together do
 * not build into build/renderer at once: the others wait, then find the build fresh.
 */
const BUILD_LOCK = path.join(ROOT, 'build', '.e2e-build-lock');
/** A lock older than this is left over from a killed run, ms. */
const STALE_LOCK_MS = 180_000;

async function takeBuildLock(timeoutMs: number): Promise<() => void> {
  mkdirSync(path.dirname(BUILD_LOCK), { recursive: true });
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    try {
      mkdirSync(BUILD_LOCK);
      return () => rmSync(BUILD_LOCK, { recursive: true, force: true });
    } catch {
      try {
        if (Date.now() - statSync(BUILD_LOCK).mtimeMs > STALE_LOCK_MS)
          rmSync(BUILD_LOCK, { recursive: true, force: true });
      } catch {
        // gone meanwhile
      }
      if (Date.now() > deadline) throw new Error(`e2e: ${BUILD_LOCK} was held for ${timeoutMs} ms`);
      await new Promise((r) => setTimeout(r, 250));
    }
  }
}

/**
 * Starts scripts/web.mjs on a free port (PORT=0) and waits for the line that names its address. One
 * file's server builds the renderer when it is stale; the others wait for it (a lock in build/).
 */
export async function startWebServer(timeoutMs = 90_000): Promise<WebServer> {
  const release = await takeBuildLock(timeoutMs);
  try {
    return await spawnWebServer(timeoutMs);
  } finally {
    release();
  }
}

function spawnWebServer(timeoutMs: number): Promise<WebServer> {
  return new Promise((resolve, reject) => {
    const child: ChildProcess = spawn(process.execPath, [path.join(ROOT, 'scripts', 'web.mjs')], {
      cwd: ROOT,
      env: { ...process.env, PORT: '0' },
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let out = '';
    const timer = setTimeout(() => {
      child.kill('SIGKILL');
      reject(new Error(`web server did not start within ${timeoutMs} ms:\n${out}`));
    }, timeoutMs);
    const onData = (d: Buffer) => {
      out += d.toString();
      const m = /http:\/\/127\.0\.0\.1:(\d+)\//.exec(out);
      if (m) {
        clearTimeout(timer);
        resolve({
          url: m[0],
          stop: () =>
            new Promise<void>((done) => {
              if (child.exitCode !== null) return done();
              child.once('exit', () => done());
              child.kill('SIGTERM');
              setTimeout(() => child.kill('SIGKILL'), 3000).unref();
            }),
        });
      }
    };
    child.stdout?.on('data', onData);
    child.stderr?.on('data', (d: Buffer) => (out += d.toString()));
    child.once('exit', (code) => {
      clearTimeout(timer);
      reject(new Error(`web server exited with ${code}:\n${out}`));
    });
  });
}

/** A stepped recording for the fake capture device, with the simulator's truth per step. */
export interface SteppedRecording {
  readonly file: string;
  readonly truth: readonly StepTruth[];
  readonly durationSeconds: number;
}

/**
 * Renders a stepped oscillator (dsp/sim/simulate.ts renderOscillator + planSchedule) at 48 kHz and writes it
 * as 32-bit float WAV (Chromium's fake device reads 16/32-bit PCM and float; 24-bit plays as silence).
 *
 * @param volts - Plan voltages.
 * @param firstHoldSeconds - Length of the first plateau, so a run started after page load begins inside it.
 */
export function writeSteppedRecording(
  name: string,
  options: OscillatorOptions,
  volts: readonly number[],
  firstHoldSeconds: number,
  holdSeconds = 3,
  glideSeconds = 0.15,
): SteppedRecording {
  mkdirSync(ARTIFACTS, { recursive: true });
  const schedule = planSchedule(volts, { holdSeconds, glideSeconds });
  schedule[0] = { ...schedule[0], holdSeconds: firstHoldSeconds };
  const r = renderOscillator({ ...options, sampleRateHz: 48_000 }, schedule);
  const file = writeWavFile(path.join(ARTIFACTS, name), [r.samples], r.sampleRateHz, '32f');
  return { file, truth: r.truth, durationSeconds: r.samples.length / r.sampleRateHz };
}

/** Cents from `refHz` to `hz` (A. J. Ellis, 1885). */
export function centsBetween(hz: number, refHz: number): number {
  return 1200 * Math.log2(hz / refHz);
}

/** Writes samples as a mono 32-bit float WAV into test-artifacts/ and returns its path. */
export function writeWav(name: string, samples: Float32Array, sampleRateHz: number): string {
  mkdirSync(ARTIFACTS, { recursive: true });
  return writeWavFile(path.join(ARTIFACTS, name), [samples], sampleRateHz, '32f');
}

/** One row of the error table as the page shows it. */
export interface StepRow {
  readonly volts: number;
  readonly hz: number;
}

/** The error table's captured rows (`data-testid="step-row"`), in order. */
export function readStepRows(page: Page): Promise<StepRow[]> {
  return page.$$eval('[data-testid="step-row"]', (els) =>
    els.map((e) => ({ volts: Number(e.getAttribute('data-volts')), hz: Number(e.getAttribute('data-hz')) })),
  );
}

/** Waits until the page shows at least `n` step rows. */
export async function waitForStepRows(page: Page, n: number, timeoutMs = 30_000): Promise<void> {
  await page.waitForFunction((k) => document.querySelectorAll('[data-testid="step-row"]').length >= k, n, {
    timeout: timeoutMs,
  });
}

/** The run prompt's phase (`data-phase`), or '' without a run. */
export async function runPhase(page: Page): Promise<string> {
  return (await page.getAttribute('[data-testid="run-prompt"]', 'data-phase').catch(() => null)) ?? '';
}

/** Every entry of the browser's unit book (IndexedDB `spanmeter-book`, store `records`), as text. */
export function readBookEntries(page: Page): Promise<string[]> {
  return page.evaluate(
    () =>
      new Promise<string[]>((resolve, reject) => {
        const req = indexedDB.open('spanmeter-book');
        req.onerror = () => reject(req.error);
        req.onsuccess = () => {
          const db = req.result;
          if (!db.objectStoreNames.contains('records')) {
            db.close();
            resolve([]);
            return;
          }
          const all = db.transaction('records', 'readonly').objectStore('records').getAll();
          all.onsuccess = () => {
            db.close();
            resolve((all.result as unknown[]).map((v) => (typeof v === 'string' ? v : JSON.stringify(v))));
          };
          all.onerror = () => reject(all.error);
        };
      }),
  );
}
