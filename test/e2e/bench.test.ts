/**
 * The bench workflow in a real browser: `npm run web` served on a free port, Debian's Chromium driven by
 * playwright-core, the audio coming from Chromium's fake capture device (a WAV file it loops) or from the
 * app's own simulated oscillator. Each run must capture every step hands-free, and every captured row
 * must match the simulator's truth within 0.1 cent (cents after A. J. Ellis, 1885).
 *
 * The truth comes from dsp/sim/simulate.ts, which the simulator's own tests check against the converter
 * physics of docs/facts.md; here it is the reference outside the browser, the UI and the pitch engine.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { chromium, type Browser, type Page } from 'playwright-core';
import path from 'node:path';
import { findDemoUnit, planSchedule, renderOscillator, trueHz } from '../../dsp/sim/index.ts';
import { simOptions, simSettingsForUnit } from '../../renderer/src/lib/sim-settings.ts';
import {
  ARTIFACTS,
  CHROMIUM,
  centsBetween,
  chromiumArgs,
  chromiumAvailable,
  startWebServer,
  writeSteppedRecording,
  writeWav,
  type WebServer,
  simQuery,
} from './helpers.ts';

const VIEWPORT = { width: 1280, height: 720 };
const PLAN = [0, 1, 2, 3];
const UNIT = 'ol3-0417';
/** Agreement asked of every captured step, cents. */
const TOLERANCE_CENTS = 0.1;

interface Row {
  volts: number;
  hz: number;
  capturedAt: number;
  stepStartedAt: number;
  uncertaintyCents: number;
  source: string;
  flags: string;
}

async function readRows(page: Page): Promise<Row[]> {
  return page.$$eval('[data-testid="step-row"]', (els) =>
    els.map((e) => ({
      volts: Number(e.getAttribute('data-volts')),
      hz: Number(e.getAttribute('data-hz')),
      capturedAt: Number(e.getAttribute('data-captured-at')),
      stepStartedAt: Number(e.getAttribute('data-step-started-at')),
      uncertaintyCents: Number(e.getAttribute('data-uncertainty-cents')),
      source: e.getAttribute('data-source') ?? '',
      flags: e.getAttribute('data-flags') ?? '',
    })),
  );
}

async function attr(page: Page, testId: string, name: string): Promise<string> {
  return (await page.getAttribute(`[data-testid="${testId}"]`, name)) ?? '';
}

async function frameFigures(page: Page): Promise<{ fps: number; worstMs: number }> {
  return {
    fps: Number(await attr(page, 'fps', 'data-fps')),
    worstMs: Number(await attr(page, 'fps', 'data-worst-ms')),
  };
}

const enabled = chromiumAvailable();

/**
 * A key press, as a user's first touch of the page. Chromium may keep an AudioContext suspended until the page
 * has had a user gesture (its autoplay policy), and whether it does depends on timing; the app resumes on
 * any key or click (useAudioInput). The activation is sticky, so it also covers a context opened later.
 */
async function userGesture(page: Page): Promise<void> {
  await page.keyboard.press('Shift');
}

describe.skipIf(!enabled)('bench workflow in Chromium', () => {
  let server: WebServer;
  let browser: Browser | null = null;

  beforeAll(async () => {
    server = await startWebServer();
  }, 120_000);

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  // This run once stopped after its second or third step: each 3 s step of the unit below (a thermal tail
  // of 0.1 cent per volt, τ = 0.8 s) was still creeping when the file moved on, and the run dropped the
  // window it had waited on. It now takes the last full window before the move (dsp/calibration/run.ts closeBeforeMove).
  it(
    'captures a stepped recording from the fake audio input hands-free, each step within 0.1 cent',
    { tags: ['real-time'], timeout: 240_000 },
    async () => {
      const unit = findDemoUnit(UNIT);
      expect(unit).toBeDefined();
      // First plateau 8 s, so that the run can start inside it after the page has loaded.
      const rec = writeSteppedRecording('e2e-steps.wav', { ...unit!.options, snrDb: 70 }, PLAN, 8);
      browser = await chromium.launch({ executablePath: CHROMIUM, args: chromiumArgs(rec.file) });
      const page = await browser.newPage({ viewport: VIEWPORT });
      const errors: string[] = [];
      page.on('pageerror', (e) => errors.push(e.message));
      await page.goto(`${server.url}?plan=${PLAN.join(',')}`);
      await userGesture(page);

      // The signal is there: the level meter reads a usable level and the readout shows a pitch.
      await page.waitForFunction(
        () => document.querySelector('[data-testid="level-meter"]')?.getAttribute('data-level') === 'ok',
        undefined,
        { timeout: 60_000 },
      );
      const rate = await page.innerText('[data-testid="sample-rate"]');
      // Wait until the fake device is early in the first plateau of a loop (it loops the file).
      let startStream = 0;
      const deadline = Date.now() + 45_000;
      for (;;) {
        const hz = Number(await attr(page, 'live-hz', 'data-hz'));
        const t = Number(await attr(page, 'readout', 'data-stream-seconds'));
        const inLoop = t % rec.durationSeconds;
        if (
          hz > 0 &&
          Math.abs(centsBetween(hz, rec.truth[0].recordedHz)) < 50 &&
          inLoop > 0.5 &&
          inLoop < 4
        ) {
          startStream = t;
          break;
        }
        if (Date.now() > deadline) throw new Error(`never saw the first plateau (last ${hz} Hz at ${t} s)`);
        await page.waitForTimeout(100);
      }
      await page.click('[data-testid="start-run"]');

      // On a real input the first step is confirmed with one answer ("Is this 0.000 V?"); the run waits for it.
      await page.waitForSelector('[data-testid="first-step-question"]', { timeout: 30_000 });
      await page.screenshot({ path: path.join(ARTIFACTS, 'run-first-step-1280x720.png') });
      await page.click('[data-testid="first-step-yes"]');
      await page.waitForFunction(
        () => document.querySelectorAll('[data-testid="step-row"]').length >= 2,
        undefined,
        { timeout: 60_000 },
      );
      await page.screenshot({ path: path.join(ARTIFACTS, 'run-mid-1280x720.png') });
      const midFrames = await frameFigures(page);
      // Each 3 s step of this unit is still creeping (its thermal tail) when the file moves on: the run takes
      // the last full window before the move, flagged, instead of dropping it and falling a loop behind.
      await page
        .waitForFunction(
          (n) => document.querySelectorAll('[data-testid="step-row"]').length >= n,
          PLAN.length,
          {
            timeout: 120_000,
          },
        )
        .catch(async (e: unknown) => {
          const prompt = await page.innerText('[data-testid="run-prompt"]').catch(() => '');
          throw new Error(`the run stopped at: ${prompt.replace(/\s+/g, ' ')} (${String(e)})`);
        });
      await page.waitForTimeout(600);
      await page.screenshot({ path: path.join(ARTIFACTS, 'run-end-1280x720.png') });

      const rows = await readRows(page);
      expect(rows.map((r) => r.volts)).toEqual(PLAN);
      const loopStart = Math.floor(startStream / rec.durationSeconds) * rec.durationSeconds;
      const report = rows.map((r, i) => {
        const truth = rec.truth[i];
        const off = centsBetween(r.hz, truth.recordedHz);
        // The step change in the file: the glide into step i starts 0.15 s before its hold.
        const changeAt = loopStart + (i === 0 ? 0 : truth.startSeconds - 0.15);
        return {
          volts: r.volts,
          hz: r.hz,
          truthHz: truth.recordedHz,
          offCents: off,
          uCents: r.uncertaintyCents,
          source: r.source,
          flags: r.flags,
          latency: r.capturedAt - changeAt,
        };
      });
      console.log(`e2e fake input (${rate}):`, JSON.stringify(report));
      console.log('e2e fake input, frames mid-run:', JSON.stringify(midFrames));
      const dropped = await (await page.$('[data-testid="dropped"]'))?.textContent();
      if (dropped) console.log('e2e fake input: the page fell behind:', dropped);
      for (const r of report) {
        if (r.flags.split(' ').includes('spans-break')) {
          // Audio went missing inside this step's window: the worklet dropped blocks because the page fell
          // behind, or the fake device skipped on a loaded machine (a phase jump the engine finds in the data,
          // dsp/pitch/reading.ts). The step says so, and is held to its own stated uncertainty (k = 2, JCGM
          // 100:2008 §6.2) rather than to the 0.1 cent of an unbroken window.
          expect(
            Math.abs(r.offCents),
            `${r.volts} V (break in the audio): ${r.hz} Hz vs ${r.truthHz} Hz`,
          ).toBeLessThan(2 * r.uCents);
        } else {
          expect(Math.abs(r.offCents), `${r.volts} V: ${r.hz} Hz vs ${r.truthHz} Hz`).toBeLessThan(
            TOLERANCE_CENTS,
          );
        }
      }
      expect(await attr(page, 'run-prompt', 'data-phase')).toBe('finished');
      expect(errors).toEqual([]);
      await browser.close();
      browser = null;
    },
  );

  // Issue 11 §3: the first step is confirmed against what is known. Here the recording's 1 V plateau comes
  // first, so step 1 ("0 V") hears 65.5 Hz: the run must ask, wait for the answer, and take no later step
  // meanwhile; measured again on the 0 V plateau and confirmed, every row carries its own voltage's pitch,
  // never the pitch of the volt above it.
  it(
    'asks about a first step taken on the wrong voltage and waits, so no step is labelled a volt low',
    { tags: ['real-time'], timeout: 300_000 },
    async () => {
      const unit = findDemoUnit(UNIT)!;
      // 1 V first (8 s, long enough to start the run inside it), then 2 and 3 V, then 0 V held 6 s.
      const schedule = planSchedule([1, 2, 3, 0], { holdSeconds: 3, glideSeconds: 0.15 });
      schedule[0] = { ...schedule[0], holdSeconds: 8 };
      schedule[3] = { ...schedule[3], holdSeconds: 6 };
      const rec = renderOscillator({ ...unit.options, snrDb: 70, sampleRateHz: 48_000 }, schedule);
      const file = writeWav('e2e-first-step.wav', rec.samples, rec.sampleRateHz);
      const truthHz = (v: number) => rec.truth.find((t) => t.volts === v)!.recordedHz;
      browser = await chromium.launch({ executablePath: CHROMIUM, args: chromiumArgs(file) });
      const page = await browser.newPage({ viewport: VIEWPORT });
      const errors: string[] = [];
      page.on('pageerror', (e) => errors.push(e.message));
      await page.goto(`${server.url}?plan=${PLAN.join(',')}`);
      await userGesture(page);
      await page.waitForFunction(
        () => document.querySelector('[data-testid="level-meter"]')?.getAttribute('data-level') === 'ok',
        undefined,
        { timeout: 60_000 },
      );
      // Start inside the 1 V plateau.
      const deadline = Date.now() + 45_000;
      for (;;) {
        const hz = Number(await attr(page, 'live-hz', 'data-hz'));
        const t = Number(await attr(page, 'readout', 'data-stream-seconds'));
        const inLoop = (t * 48_000) / rec.samples.length;
        const frac = inLoop - Math.floor(inLoop);
        if (hz > 0 && Math.abs(centsBetween(hz, truthHz(1))) < 50 && frac * (rec.samples.length / 48_000) < 4)
          break;
        if (Date.now() > deadline) throw new Error(`never saw the 1 V plateau (last ${hz} Hz at ${t} s)`);
        await page.waitForTimeout(100);
      }
      await page.click('[data-testid="start-run"]');

      // Step 1 is taken on the 1 V plateau: the question names 0 V and the pitch heard, and the run waits.
      const question = await page.waitForSelector('[data-testid="first-step-question"]', { timeout: 30_000 });
      const text = (await question.textContent()) ?? '';
      expect(text).toContain('Is this 0.000 V?');
      expect(text).toMatch(/Step 1 read 65\.4\d* Hz/);
      await page.waitForSelector('[data-testid="run-prompt"][data-phase="paused"]');
      expect(await page.innerText('[data-testid="run-prompt"] .prompt-title')).toBe(
        'Waiting for your answer',
      );
      await page.screenshot({ path: path.join(ARTIFACTS, 'first-step-question-1280x720.png') });
      // While it waits, the recording plays on through 2 and 3 V (about 7 s of audio): no step is taken.
      const t0 = Number(await attr(page, 'readout', 'data-stream-seconds'));
      await page.waitForFunction(
        (t) =>
          Number(document.querySelector('[data-testid="readout"]')?.getAttribute('data-stream-seconds')) > t,
        t0 + 7,
        { timeout: 60_000 },
      );
      expect(await page.$$eval('[data-testid="step-row"]', (els) => els.length)).toBe(1);

      // Answer as the technician would: not 0 V, measure again, until step 1 reads the 0 V pitch; then yes.
      const answers: string[] = [];
      const until = Date.now() + 120_000;
      for (;;) {
        const q = await page.waitForSelector('[data-testid="first-step-question"]', { timeout: 60_000 });
        const heard = Number(/read ([\d.]+) Hz/.exec((await q.textContent()) ?? '')?.[1]);
        if (Math.abs(centsBetween(heard, truthHz(0))) < 50) {
          answers.push(`${heard} Hz: yes`);
          await page.click('[data-testid="first-step-yes"]');
          break;
        }
        answers.push(`${heard} Hz: measure again`);
        await page.click('[data-testid="first-step-redo"]');
        await page.waitForFunction(
          (h) => !document.querySelector('[data-testid="first-step-question"]')?.textContent?.includes(h),
          String(heard),
          { timeout: 30_000 },
        );
        if (Date.now() > until) throw new Error(`step 1 never read the 0 V pitch: ${answers.join('; ')}`);
      }
      console.log('e2e first step, answers:', answers.join('; '));
      await page.waitForSelector('[data-testid="run-prompt"][data-phase="finished"]', { timeout: 120_000 });
      const rows = await readRows(page);
      const report = rows.map((r) => ({
        volts: r.volts,
        hz: r.hz,
        truthHz: truthHz(r.volts),
        offCents: centsBetween(r.hz, truthHz(r.volts)),
        uCents: r.uncertaintyCents,
        flags: r.flags,
      }));
      console.log('e2e first step, rows:', JSON.stringify(report));
      expect(rows.map((r) => r.volts)).toEqual(PLAN);
      // Each row holds its own voltage's pitch (a row a volt low would be 1200 cents off).
      for (const r of report) {
        const tol = r.flags.split(' ').includes('spans-break') ? 2 * r.uCents : TOLERANCE_CENTS;
        expect(Math.abs(r.offCents), `${r.volts} V: ${r.hz} Hz vs ${r.truthHz} Hz`).toBeLessThan(tol);
      }
      expect(errors).toEqual([]);
      await browser.close();
      browser = null;
    },
  );

  it('completes a run with the simulated oscillator, each step within 0.1 cent of its true pitch', async () => {
    browser = await chromium.launch({ executablePath: CHROMIUM, args: chromiumArgs() });
    const page = await browser.newPage({ viewport: VIEWPORT });
    const errors: string[] = [];
    page.on('pageerror', (e) => errors.push(e.message));
    await page.goto(`${server.url}${simQuery(`&unit=${UNIT}&plan=${PLAN.join(',')}`)}`);
    await page.waitForFunction(
      () => Number(document.querySelector('[data-testid="live-hz"]')?.getAttribute('data-hz')) > 0,
      undefined,
      {
        timeout: 20_000,
      },
    );
    await page.click('[data-testid="start-run"]');
    await page.waitForFunction(
      (n) => document.querySelectorAll('[data-testid="step-row"]').length >= n,
      PLAN.length,
      { timeout: 40_000 },
    );
    const frames = await frameFigures(page);
    await page.waitForTimeout(600);
    await page.screenshot({ path: path.join(ARTIFACTS, 'sim-run-end-1280x720.png') });
    const rows = await readRows(page);
    const options = simOptions(simSettingsForUnit(UNIT));
    const report = rows.map((r) => {
      const truth = trueHz(r.volts, options);
      return {
        volts: r.volts,
        hz: r.hz,
        truthHz: truth,
        offCents: centsBetween(r.hz, truth),
        latency: r.capturedAt - r.stepStartedAt,
      };
    });
    console.log('e2e simulator:', JSON.stringify(report));
    console.log('e2e simulator, frames:', JSON.stringify(frames));
    console.log(
      'e2e simulator, engine load % at 48 kHz:',
      await attr(page, 'engine-load', 'data-load-percent'),
      'capture ms:',
      await attr(page, 'engine-load', 'data-max-capture-ms'),
    );
    expect(rows.map((r) => r.volts)).toEqual(PLAN);
    for (const r of report)
      expect(Math.abs(r.offCents), `${r.volts} V: ${r.hz} Hz vs ${r.truthHz} Hz`).toBeLessThan(
        TOLERANCE_CENTS,
      );
    expect(errors).toEqual([]);
    await browser.close();
    browser = null;
  }, 90_000);

  it('keeps up with a 96 kHz stream (engine time well under audio time)', async () => {
    browser = await chromium.launch({ executablePath: CHROMIUM, args: chromiumArgs() });
    const page = await browser.newPage({ viewport: VIEWPORT });
    await page.goto(`${server.url}?input=sim&unit=${UNIT}&rate=96000`);
    await page.waitForFunction(
      () => document.querySelector('[data-testid="engine-load"]')?.getAttribute('data-rate') === '96000',
      undefined,
      {
        timeout: 20_000,
      },
    );
    await page.waitForTimeout(4000);
    const load = Number(await attr(page, 'engine-load', 'data-load-percent'));
    const sim = Number(await attr(page, 'engine-load', 'data-sim-load-percent'));
    console.log(`e2e 96 kHz: engine ${load} % of audio time (analysis), simulator rendering ${sim} %`);
    expect(load).toBeGreaterThan(0);
    expect(load).toBeLessThan(50);
    await browser.close();
    browser = null;
  }, 60_000);
});
