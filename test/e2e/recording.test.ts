/**
 * "Open WAV…" in a real browser: a generated recording is set on the file input (playwright's
 * setInputFiles), the engine worker analyses it with `analyzeRecording` (dsp/recording/recording.ts, the
 * analysis `spanmeter analyze` runs), and the error table must show the same Hz as that function gives
 * in Node for the same samples, each within 0.1 cent of the simulator's truth (dsp/sim/simulate.ts
 * StepTruth; cents after A. J. Ellis, 1885). A recording whose plateaus do not match the plan gives
 * the typed mismatch as a message, and the user's live run stays.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { chromium, type Browser, type Page } from 'playwright-core';
import path from 'node:path';
import { analyzeRecording } from '../../dsp/recording/index.ts';
import { findDemoUnit, planSchedule, renderOscillator } from '../../dsp/sim/index.ts';
import { DEFAULT_TOLERANCE_CENTS } from '../../renderer/src/ui/results/index.ts';
import {
  ARTIFACTS,
  CHROMIUM,
  centsBetween,
  chromiumArgs,
  chromiumAvailable,
  readBookEntries,
  readStepRows,
  runPhase,
  startWebServer,
  waitForStepRows,
  writeWav,
  type WebServer,
  simQuery,
} from './helpers.ts';

const VIEWPORT = { width: 1280, height: 720 };
const PLAN = [0, 1, 2, 3];
const UNIT = 'ol3-0423';

function render(volts: readonly number[]) {
  const unit = findDemoUnit(UNIT)!;
  return renderOscillator(
    { ...unit.options, sampleRateHz: 48_000, snrDb: 70 },
    planSchedule(volts, { holdSeconds: 2.5 }),
  );
}

const enabled = chromiumAvailable();

describe.skipIf(!enabled)('Open WAV… in Chromium', () => {
  let server: WebServer;
  let browser: Browser;

  beforeAll(async () => {
    server = await startWebServer();
    browser = await chromium.launch({ executablePath: CHROMIUM, args: chromiumArgs() });
  }, 120_000);

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  async function openPage(query: string): Promise<{ page: Page; errors: string[] }> {
    const page = await browser.newPage({ viewport: VIEWPORT });
    const errors: string[] = [];
    page.on('pageerror', (e) => errors.push(e.message));
    await page.goto(`${server.url}${query}`);
    return { page, errors };
  }

  it('shows the steps analyzeRecording finds, with the same Hz, its fit and its advice', async () => {
    const rec = render(PLAN);
    const file = writeWav('e2e-open-wav.wav', rec.samples, rec.sampleRateHz);
    // The app judges against the unit's tolerance (the book's default while no unit is set), and the advice's
    // "next" depends on it: the reference uses the same.
    const ref = analyzeRecording(rec.samples, rec.sampleRateHz, {
      points: PLAN,
      toleranceCents: DEFAULT_TOLERANCE_CENTS,
    });
    expect(ref.kind).toBe('ok');
    if (ref.kind !== 'ok') return;

    const { page, errors } = await openPage(simQuery(`&unit=ol3-0412&plan=${PLAN.join(',')}`));
    await page.setInputFiles('[data-testid="open-wav"]', file);
    await waitForStepRows(page, PLAN.length, 30_000);
    await page.waitForSelector('[data-testid="recording-panel"]');
    const rows = await readStepRows(page);
    expect(rows.map((r) => r.volts)).toEqual(PLAN);
    const report = rows.map((r, i) => ({
      volts: r.volts,
      hz: r.hz,
      nodeHz: ref.steps[i].hz,
      vsNodeCents: centsBetween(r.hz, ref.steps[i].hz),
      vsTruthCents: centsBetween(r.hz, rec.truth[i].recordedHz),
    }));
    console.log('e2e open WAV:', JSON.stringify(report));
    for (const r of report) {
      // The same function on the same float samples: agreement to far below anything measurable.
      expect(Math.abs(r.vsNodeCents), `${r.volts} V: ${r.hz} vs ${r.nodeHz}`).toBeLessThan(1e-6);
      expect(Math.abs(r.vsTruthCents)).toBeLessThan(0.1);
    }
    const status = await page.innerText('[data-testid="recording-panel"]');
    expect(status).toContain('e2e-open-wav.wav');
    // The fit and the advice are the recording's own.
    const fit = await page.innerText('[data-testid="fit-summary"]');
    expect(fit).toContain(ref.fit!.octavesPerVolt.toFixed(6));
    const advice = await page.innerText('[data-testid="advice"]');
    expect(advice).toContain(ref.advice!.next);
    await page.screenshot({ path: path.join(ARTIFACTS, 'open-wav-1280x720.png') });

    // Saving it into a unit record stores the recording's one result (dsp/calibration/result.ts).
    await page.click('[data-testid="tab-book"]');
    await page.click('[data-testid="save-run"]');
    await page.waitForSelector('text=Saved as run');
    // The browser's unit book is in IndexedDB since issue 10 (it was one localStorage blob).
    const saved = (await readBookEntries(page)).join('\n');
    expect(saved).toContain(String(ref.steps[2].hz));
    expect(errors).toEqual([]);
    await page.close();
  }, 60_000);

  it('reports a plateau-count mismatch by count and time, and keeps the live run', async () => {
    // The file is written before the run starts, so the run is still going when it is opened.
    const rec = render([0, 1, 2]);
    const file = writeWav('e2e-open-wav-3-steps.wav', rec.samples, rec.sampleRateHz);
    const { page, errors } = await openPage(simQuery(`&unit=ol3-0412&plan=${PLAN.join(',')}`));
    await page.waitForFunction(
      () => Number(document.querySelector('[data-testid="live-hz"]')?.getAttribute('data-hz')) > 0,
      undefined,
      { timeout: 20_000 },
    );
    await page.click('[data-testid="start-run"]');
    await waitForStepRows(page, 1, 20_000);
    const before = await readStepRows(page);
    await page.setInputFiles('[data-testid="open-wav"]', file);
    await page.waitForSelector('[data-testid="wav-message"][data-kind="error"]', { timeout: 30_000 });
    const text = await page.innerText('[data-testid="wav-message"]');
    console.log('e2e open WAV, mismatch message:', text);
    expect(text).toMatch(
      /^e2e-open-wav-3-steps\.wav gave no analysis: found 3 plateaus \(at \d+\.\d–\d+\.\d s, \d+\.\d–\d+\.\d s, \d+\.\d–\d+\.\d s\) but 4 voltages were given\./,
    );
    expect(text).toContain('Your run is kept (paused: press Resume to go on).');
    // The live run is still on screen with its captures, and goes on when resumed.
    const after = await readStepRows(page);
    expect(after.slice(0, before.length)).toEqual(before);
    expect(await page.isVisible('[data-testid="recording-panel"]')).toBe(false);
    expect(await runPhase(page)).toBe('paused');
    await page.click('[data-testid="pause"]');
    await page.waitForFunction(
      () => document.querySelector('[data-testid="run-prompt"]')?.getAttribute('data-phase') !== 'paused',
    );
    await waitForStepRows(page, before.length + 1, 20_000);
    expect(errors).toEqual([]);
    await page.close();
  }, 60_000);
});
