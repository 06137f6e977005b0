/**
 * The drive in Debian's Chromium: a hands-off span run and a trim loop on the simulated bench (the
 * drive patched into the simulated oscillator through a modelled output error, calibrated with the
 * simulated meter); the DC output rendered in an OfflineAudioContext; the MIDI bytes sent to a recording
 * stub of `navigator.requestMIDIAccess`; and the faults (output device gone, MIDI refused, readings that
 * are not a line).
 *
 * References outside the app: the simulator's truth (dsp/sim/simulate.ts `trueHz`, checked against the
 * converter physics of docs/facts.md by its own tests) at the voltage the simulated jack really carries;
 * MIDI 1.0 (note numbers with middle C = 60, Note On 0x9n / Note Off 0x8n with n = channel − 1) with
 * @tonaljs/tonal's Midi.toMidi as an independent note-number reference; cents after A. J. Ellis (1885).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { chromium, type Browser, type BrowserContext, type Page } from 'playwright-core';
import { build } from 'esbuild';
import path from 'node:path';
import { Midi } from '@tonaljs/tonal';
import { meterUncertainty, SIM_DRIVE_MODEL, SIM_METER_SPEC } from '../../dsp/drive/index.ts';
import { trueHz } from '../../dsp/sim/index.ts';
import { simOptions, simSettingsForUnit } from '../../renderer/src/lib/sim-settings.ts';
import {
  ARTIFACTS,
  CHROMIUM,
  ROOT,
  centsBetween,
  chromiumArgs,
  chromiumAvailable,
  startWebServer,
  type WebServer,
  simQuery,
} from './helpers.ts';

const VIEWPORT = { width: 1280, height: 900 };
const UNIT = 'ol3-0417';
const PLAN8 = [0, 1, 2, 3, 4, 5, 6, 7];
/** Agreement asked of every hands-off step with the simulator's truth, cents (the issue's bar). */
const TOLERANCE_CENTS = 0.05;

const enabled = chromiumAvailable();

/** Set by `npm run bench:drive`: also run the keypress-driven run, for the timing beside hands-off. */
const BENCH = process.env.SPANMETER_DRIVE_BENCH === '1';

/** Prints one line of the benchmark: Start to the finished 8-step table, and to each row. */
function benchLine(how: string, totalMs: number, rowMs: readonly number[]): void {
  const rows = rowMs.map((ms) => (ms / 1000).toFixed(1)).join(' ');
  console.log(
    `e2e drive bench: ${how}, 0–7 V, Start to 8-step table: ${(totalMs / 1000).toFixed(1)} s (rows at ${rows} s)`,
  );
}

/** Actions wait long on a loaded machine: nothing here is timed, only counted. */
const ACTION_TIMEOUT_MS = 120_000;

async function attr(page: Page, testId: string, name: string): Promise<string> {
  return (await page.getAttribute(`[data-testid="${testId}"]`, name)) ?? '';
}

async function waitRows(page: Page, n: number, timeout = 120_000): Promise<void> {
  await page.waitForFunction((k) => document.querySelectorAll('[data-testid="step-row"]').length >= k, n, {
    timeout,
  });
}

async function rowCount(page: Page): Promise<number> {
  return page.$$eval('[data-testid="step-row"]', (els) => els.length);
}

async function waitLive(page: Page): Promise<void> {
  await page.waitForFunction(
    () => Number(document.querySelector('[data-testid="live-hz"]')?.getAttribute('data-hz')) > 0,
    undefined,
    { timeout: ACTION_TIMEOUT_MS },
  );
}

async function waitCalibrated(page: Page): Promise<void> {
  await page.waitForFunction(
    () =>
      document.querySelector('[data-testid="drive-calibration"]')?.getAttribute('data-calibrated') === 'yes',
    undefined,
    { timeout: ACTION_TIMEOUT_MS },
  );
}

async function simCalibrate(page: Page): Promise<void> {
  await page.click('[data-testid="drive-sim-calibrate"]');
  await waitCalibrated(page);
}

/** Replaces `navigator.requestMIDIAccess` with a stub whose one output records every message sent. */
function midiStub(deny: boolean): string {
  return `
    // Kept in sessionStorage as well, so that what a closing page sent can be read after a reload.
    const keep = () => { try { sessionStorage.setItem('__midiSent', JSON.stringify(window.__midiSent)); } catch {} };
    window.__midiSent = (() => { try { return JSON.parse(sessionStorage.getItem('__midiSent') || '[]'); } catch { return []; } })();
    window.__midiOptions = [];
    const port = {
      id: 'stub-out-1', name: 'Bench MIDI-CV (stub)', state: 'connected', connection: 'open', type: 'output',
      send(data) { window.__midiSent.push(Array.from(data)); keep(); },
    };
    const access = { inputs: new Map(), outputs: new Map([[port.id, port]]), sysexEnabled: false, onstatechange: null };
    Object.defineProperty(Navigator.prototype, 'requestMIDIAccess', {
      configurable: true,
      value(options) {
        window.__midiOptions.push(options);
        return ${deny} ? Promise.reject(new DOMException('MIDI refused by the user', 'NotAllowedError')) : Promise.resolve(access);
      },
    });`;
}

/** An extra audio output the page can pick, which `__unplug()` removes (with a devicechange event). */
const OUTPUT_STUB = `
  window.__outputs = [{ deviceId: 'bench-dc-1', kind: 'audiooutput', label: 'Bench DC interface (stub)', groupId: 'g1' }];
  const realEnum = MediaDevices.prototype.enumerateDevices;
  MediaDevices.prototype.enumerateDevices = async function () {
    const real = await realEnum.call(this);
    return [...real, ...window.__outputs.map((o) => ({ ...o, toJSON() { return o; } }))];
  };
  window.__sinkIds = [];
  AudioContext.prototype.setSinkId = function (id) { window.__sinkIds.push(id); return Promise.resolve(); };
  window.__unplug = () => {
    window.__outputs = [];
    navigator.mediaDevices.dispatchEvent(new Event('devicechange'));
  };`;

async function acceptCaution(page: Page): Promise<void> {
  await page.waitForSelector('[data-testid="drive-caution"]');
  await page.check('[data-testid="drive-caution-check"]');
  await page.click('[data-testid="drive-caution-accept"]');
}

/** Picks an output in a drive picker once the page lists it (an <option> is never 'visible' to playwright). */
async function chooseOutput(page: Page, testId: string, value: string): Promise<void> {
  await page.waitForSelector(`[data-testid="${testId}"] option[value="${value}"]`, { state: 'attached' });
  await page.selectOption(`[data-testid="${testId}"]`, value);
}

/** Waits for the drive to be open. */
async function waitOpen(page: Page): Promise<void> {
  await page.waitForFunction(
    () => document.querySelector('[data-testid="drive-status"]')?.getAttribute('data-open') === 'yes',
  );
}

async function typeReading(page: Page, volts: number): Promise<void> {
  await page.fill('[data-testid="drive-cal-reading"]', String(volts));
  await page.click('[data-testid="drive-cal-next"]');
}

/**
 * The drive going back to 0 V on MIDI channel 1 with 0 V on note 36 (MIDI 1.0: Note Off 0x80, Note On
 * 0x90): the held note released, the 0 V note played and released, so the last message is a note-off.
 */
function backToRest(heldNote: number): number[][] {
  return [
    [0x80, heldNote, 0],
    [0x90, 36, 100],
    [0x80, 36, 0],
  ];
}

async function midiSent(page: Page): Promise<number[][]> {
  return page.evaluate(() => (window as unknown as { __midiSent: number[][] }).__midiSent);
}

// Every wait counts events (rows, attributes, messages) with generous timeouts; nothing asserts on time.
describe.skipIf(!enabled)('drive in Chromium', () => {
  let server: WebServer;
  let browser: Browser;

  beforeAll(async () => {
    server = await startWebServer();
    browser = await chromium.launch({ executablePath: CHROMIUM, args: chromiumArgs() });
  }, 180_000);

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  /**
   * The app on the simulated oscillator in a fresh context (the stubs given installed before the page
   * loads), live; with `runRows` a run started by hand and that many steps captured; with `kind` that
   * drive chosen and its caution accepted. Page errors are collected.
   */
  async function openApp(o: {
    plan: readonly number[];
    simDrive?: boolean;
    initScript?: string;
    runRows?: number;
    kind?: 'midi' | 'dc';
    /** 1 for a test that acts mid-run (see simQuery); the tests' pace otherwise. */
    pace?: number;
  }): Promise<{ ctx: BrowserContext; page: Page; errors: string[] }> {
    const ctx = await browser.newContext({ viewport: VIEWPORT });
    if (o.initScript) await ctx.addInitScript(o.initScript);
    const page = await ctx.newPage();
    page.setDefaultTimeout(ACTION_TIMEOUT_MS);
    const errors: string[] = [];
    page.on('pageerror', (e) => errors.push(e.message));
    await page.goto(
      `${server.url}${simQuery(`${o.simDrive ? '&drive=sim' : ''}&unit=${UNIT}&plan=${o.plan.join(',')}`, o.pace)}`,
    );
    await waitLive(page);
    if (o.runRows !== undefined) {
      await page.click('[data-testid="start-run"]');
      await waitRows(page, o.runRows);
    }
    if (o.kind) {
      await page.selectOption('[data-testid="drive-kind"]', o.kind);
      await acceptCaution(page);
    }
    return { ctx, page, errors };
  }

  it('runs 0–7 V hands-off on the simulated bench: 8 steps, no input after Start, each within 0.05 cent of the truth at its calibrated voltage', async () => {
    const { ctx, page, errors } = await openApp({ plan: PLAN8, simDrive: true });
    await simCalibrate(page);
    const t0 = Date.now();
    await page.click('[data-testid="start-hands-off"]');
    // No input from here on: only waiting (and looking: a screenshot mid-run).
    const rowMs: number[] = [];
    for (let k = 1; k <= PLAN8.length; k++) {
      await waitRows(page, k);
      rowMs.push(Date.now() - t0);
      if (k === 4)
        await page.screenshot({ path: path.join(ARTIFACTS, 'drive-hands-off-mid-run-1280x900.png') });
    }
    const handsOffMs = Date.now() - t0;
    benchLine('hands-off', handsOffMs, rowMs);
    await page.waitForFunction(
      () => document.querySelector('[data-testid="run-prompt"]')?.getAttribute('data-phase') === 'finished',
      undefined,
      { timeout: ACTION_TIMEOUT_MS },
    );
    await page.click('text=Applied voltages');
    await page.screenshot({ path: path.join(ARTIFACTS, 'drive-hands-off-1280x900.png') });
    const rows = await page.$$eval('[data-testid="step-row"]', (els) =>
      els.map((e) => ({
        step: Number(e.getAttribute('data-step')),
        volts: Number(e.getAttribute('data-volts')),
        applied: e.getAttribute('data-applied-volts') ?? '',
        hz: Number(e.getAttribute('data-hz')),
      })),
    );
    const log = await page.$$eval('[data-testid="drive-step"]', (els) =>
      els.map((e) => ({
        step: Number(e.getAttribute('data-step')),
        applied: Number(e.getAttribute('data-applied-volts')),
        u: Number(e.getAttribute('data-applied-uncertainty-volts')),
        trueVolts: Number(e.getAttribute('data-true-volts')),
        level: Number(e.getAttribute('data-level')),
      })),
    );
    const options = simOptions(simSettingsForUnit(UNIT));
    const report = rows.map((r) => {
      const l = log.find((x) => x.step === r.step);
      if (!l) throw new Error(`step ${r.step} has no applied voltage in the drive's log`);
      // The jack's voltage worked out here from the simulated output's model (level sent × its true
      // volts at full scale + its true offset), not taken from the app's own figure.
      const jackVolts = SIM_DRIVE_MODEL.trueVoltsPerFullScale * l.level + SIM_DRIVE_MODEL.trueOffsetVolts;
      expect(Math.abs(jackVolts - l.trueVolts), `step ${r.step}: jack ${jackVolts} V`).toBeLessThan(1e-9);
      const truth = trueHz(jackVolts, options);
      return {
        volts: r.volts,
        applied: Number(r.applied),
        trueVolts: l.trueVolts,
        u: l.u,
        hz: r.hz,
        truthHz: truth,
        offCents: centsBetween(r.hz, truth),
        // What the same nominal voltage would have been without the calibration (sold as 10 V full scale).
        uncorrectedCents:
          1200 *
          (SIM_DRIVE_MODEL.trueVoltsPerFullScale * (r.volts / SIM_DRIVE_MODEL.nominalVoltsPerFullScale) +
            SIM_DRIVE_MODEL.trueOffsetVolts -
            r.volts),
      };
    });
    console.log('e2e drive hands-off:', JSON.stringify(report));
    expect(rows.map((r) => r.volts)).toEqual(PLAN8);
    for (const r of report) {
      expect(Math.abs(r.offCents), `${r.volts} V: ${r.hz} Hz vs ${r.truthHz} Hz`).toBeLessThan(
        TOLERANCE_CENTS,
      );
      // The row carries the calibrated voltage, and it is the drive's own figure for the step.
      expect(Number.isFinite(r.applied)).toBe(true);
      // The calibrated voltage is within the simulated meter's stated accuracy of the truth (its bound, ±a).
      const a = meterUncertainty(r.trueVolts, SIM_METER_SPEC).boundVolts;
      expect(
        Math.abs(r.applied - r.trueVolts),
        `${r.volts} V applied ${r.applied} vs ${r.trueVolts}`,
      ).toBeLessThan(a);
    }
    // Without the calibration the top step would have been off by far more than the meter allows.
    expect(Math.abs(report[7].uncorrectedCents)).toBeGreaterThan(50);
    expect(await attr(page, 'drive-status', 'data-at-rest')).toBe('yes');
    expect(errors).toEqual([]);
    await ctx.close();
  }, 480_000);

  it('keeps a pass history through a trim loop of three passes', async () => {
    const { ctx, page, errors } = await openApp({ plan: [0, 1, 2, 3, 4], simDrive: true });
    await simCalibrate(page);
    await page.check('[data-testid="trim-loop"]');
    await page.fill('[data-testid="trim-loop-passes"]', '3');
    await page.click('[data-testid="start-hands-off"]');
    try {
      await page.waitForFunction(
        () => document.querySelectorAll('[data-testid="pass-row"]').length >= 3,
        undefined,
        { timeout: 480_000 },
      );
    } catch (e) {
      // What the page showed when the passes stopped coming, for whoever reads the failure.
      await page.screenshot({ path: path.join(ARTIFACTS, 'drive-trim-loop-stalled.png'), fullPage: true });
      console.log(
        'e2e drive trim loop stalled; the page read:',
        await page.evaluate(() => document.body.innerText),
      );
      throw e;
    }
    await page.screenshot({ path: path.join(ARTIFACTS, 'drive-trim-loop-1280x900.png') });
    const passes = await page.$$eval('[data-testid="pass-row"]', (els) =>
      els.map((e) => ({
        pass: Number(e.getAttribute('data-pass')),
        scale: Number(e.getAttribute('data-scale-cents-per-octave')),
      })),
    );
    console.log('e2e drive trim loop:', JSON.stringify(passes));
    expect(passes.map((p) => p.pass)).toEqual([1, 2, 3]);
    // The demo unit's scale error is 4.2 ¢/oct (sim-settings), untouched between passes here.
    for (const p of passes) expect(Math.abs(p.scale - 4.2), `pass ${p.pass}: ${p.scale}`).toBeLessThan(1);
    // With no trim between passes, the passes repeat one another (common practice, no source: a sweep's
    // scale figure is repeatable to a small fraction of a cent per octave on a steady oscillator).
    const scales = passes.map((p) => p.scale);
    expect(Math.max(...scales) - Math.min(...scales), `scales ${scales.join(', ')}`).toBeLessThan(0.1);
    expect(await attr(page, 'hands-off-state', 'data-active')).toBe('no');
    expect(errors).toEqual([]);
    await ctx.close();
  }, 600_000);

  it('renders the DC output in an OfflineAudioContext: calibrated levels per step, ramps of the set length, never above the maximum', async () => {
    const bundle = await build({
      stdin: {
        contents: `import { DcOutput } from './renderer/src/drive/dc-output.ts';
          import * as drive from './dsp/drive/index.ts';
          (globalThis as any).__drive = { DcOutput, ...drive };`,
        resolveDir: ROOT,
        loader: 'ts',
      },
      bundle: true,
      format: 'iife',
      write: false,
      target: 'es2022',
    });
    const page = await browser.newPage();
    page.setDefaultTimeout(ACTION_TIMEOUT_MS);
    // A blank page: the app's Content-Security-Policy (rightly) refuses an injected script.
    await page.goto('about:blank');
    await page.addScriptTag({ content: bundle.outputFiles[0].text });
    const out = await page.evaluate(async () => {
      // eslint-disable-next-line @typescript-eslint/no-explicit-any
      const d = (globalThis as any).__drive;
      const fs = 48_000;
      const ramp = 0.02;
      const maxVolts = 2.5;
      // A drive with 9.87 V at full scale and +7.5 mV offset, calibrated by four readings.
      const readings = [0, 0.1, 0.2, 0.3].map((level: number) => ({
        level,
        readingVolts: 9.87 * level + 0.0075,
      }));
      const fit = d.fitDriveCalibration(readings, d.SIM_METER_SPEC, { expectedGain: 10 });
      const cal = fit.calibration;
      const ctx = new OfflineAudioContext(2, fs, fs);
      const dc = new d.DcOutput(ctx, 1, 2);
      const bounds = d.levelBounds(cal, maxVolts, 1);
      dc.setBounds(bounds);
      const steps = [
        { t: 0.1, volts: 1 },
        { t: 0.3, volts: 2 },
        { t: 0.5, volts: 3 }, // above the maximum: clamped to 2.5 V
        { t: 0.7, volts: 0.5 },
      ];
      const ramps = steps.map((s) => dc.rampAt(d.levelForVolts(cal, s.volts), s.t, ramp));
      dc.rampAt(0, 0.9, ramp); // back to rest
      const buf = await ctx.startRendering();
      const ch0 = buf.getChannelData(0);
      const ch1 = buf.getChannelData(1);
      const at = (t: number) => ch1[Math.round(t * fs)];
      let max = -Infinity;
      let other = 0;
      for (let i = 0; i < ch1.length; i++) {
        max = Math.max(max, ch1[i]);
        other = Math.max(other, Math.abs(ch0[i]));
      }
      // Samples strictly between the 1 V and 2 V plateaus: the ramp.
      const lo = at(0.2);
      const hi = at(0.4);
      let rampSamples = 0;
      for (let i = Math.round(0.25 * fs); i < Math.round(0.35 * fs); i++)
        if (ch1[i] > lo && ch1[i] < hi) rampSamples++;
      return {
        gain: cal.gainVoltsPerLevel,
        offset: cal.offsetVolts,
        before: at(0.05),
        plateaus: [at(0.2), at(0.4), at(0.6), at(0.8)],
        rest: at(0.99),
        expected: [1, 2, maxVolts, 0.5].map((v: number) =>
          Math.fround(d.levelForVolts(cal, Math.min(v, maxVolts))),
        ),
        max,
        high: bounds.high,
        other,
        rampSamples,
        clampedTo: ramps[2].to,
        rampSeconds: ramps.map((r: { seconds: number }) => r.seconds),
      };
    });
    console.log('e2e drive offline DC:', JSON.stringify(out));
    expect(out.before).toBe(0);
    expect(out.plateaus[2]).toBe(out.clampedTo);
    for (let i = 0; i < 4; i++) {
      if (i !== 2) expect(out.plateaus[i]).toBe(out.expected[i]);
      else expect(Math.abs(out.plateaus[i] - out.expected[i])).toBeLessThanOrEqual(3e-8); // one ulp inside
      // As voltage: the calibrated gain and offset give the step's voltage back, to 32-bit precision.
      const volts = out.gain * out.plateaus[i] + out.offset;
      expect(Math.abs(volts - [1, 2, 2.5, 0.5][i])).toBeLessThan(2e-6);
      expect(volts).toBeLessThanOrEqual(2.5);
    }
    expect(out.rest).toBe(0);
    // Never above the maximum, not even by the 32-bit rounding of a sample.
    expect(out.max).toBeLessThanOrEqual(out.high);
    expect(out.gain * out.max + out.offset).toBeLessThanOrEqual(2.5);
    expect(out.other).toBe(0);
    // 20 ms at 48 kHz is 960 samples; the ends may fall either side of a sample.
    expect(Math.abs(out.rampSamples - 960)).toBeLessThanOrEqual(2);
    await page.close();
  }, 240_000);

  it('sends the exact MIDI bytes: note-on 0x90 + channel per step, note-off on change and on stop, nothing after', async () => {
    const { ctx, page, errors } = await openApp({
      plan: [0, 1, 2, 3],
      initScript: midiStub(false),
      kind: 'midi',
    });
    await chooseOutput(page, 'drive-midi-port', 'stub-out-1');
    await page.fill('[data-testid="drive-midi-channel"]', '3');
    await waitOpen(page);
    // A converter with 0 V on note 36, a gain of 1.002 and +3 mV offset: its readings at notes 36, 60, 96, 120.
    await page.click('[data-testid="drive-calibrate"]');
    for (const r of [0.003, 2.007, 5.013, 7.017]) await typeReading(page, r);
    await waitCalibrated(page);
    const afterCal = (await midiSent(page)).length;
    await page.click('[data-testid="start-hands-off"]');
    await waitRows(page, 4);
    await page.waitForFunction(
      () => document.querySelector('[data-testid="hands-off-state"]')?.getAttribute('data-active') === 'no',
      undefined,
      { timeout: ACTION_TIMEOUT_MS },
    );
    await page.waitForTimeout(2000); // nothing may follow the stop
    const sent = await midiSent(page);
    const options = await page.evaluate(
      () => (window as unknown as { __midiOptions: unknown[] }).__midiOptions,
    );
    const notes = await page.$$eval('[data-testid="drive-step"]', (els) =>
      els.map((e) => Number(e.getAttribute('data-note'))),
    );
    console.log('e2e drive MIDI bytes:', JSON.stringify(sent));
    // MIDI 1.0: channel 3 → status 0x92 (note on) and 0x82 (note off).
    const on = (n: number) => [0x92, n, 100];
    const off = (n: number) => [0x82, n, 0];
    expect(sent.slice(0, afterCal)).toEqual([
      on(36),
      off(36),
      on(60),
      off(60),
      on(96),
      off(96),
      on(120),
      // calibration over: back to the 0 V note and released
      off(120),
      on(36),
      off(36),
    ]);
    expect(sent.slice(afterCal)).toEqual([
      on(36),
      off(36),
      on(48),
      off(48),
      on(60),
      off(60),
      on(72),
      // stop: back to the 0 V note, released; the last message is a note-off
      off(72),
      on(36),
      off(36),
    ]);
    // Note ↔ voltage against MIDI 1.0 numbering (tonal's Midi.toMidi as the reference): with 0 V on C2 (36),
    // 1 V is C3, 2 V is middle C (C4 = 60), 3 V is C5.
    expect(notes).toEqual(['C2', 'C3', 'C4', 'C5'].map((n) => Midi.toMidi(n)));
    expect(Midi.toMidi('C4')).toBe(60);
    expect(options).toEqual([{ sysex: false }]);
    const rows = await page.$$eval('[data-testid="step-row"]', (els) =>
      els.map((e) => Number(e.getAttribute('data-applied-volts'))),
    );
    // The converter's calibrated voltage for each note: 1.002·nominal + 3 mV.
    rows.forEach((v, i) => expect(v).toBeCloseTo(1.002 * i + 0.003, 6));
    expect(errors).toEqual([]);
    await ctx.close();
  }, 400_000);

  it(
    'closing the window mid-run sends the converter back to its 0 V note and releases it',
    { tags: ['real-time'], timeout: 400_000 },
    async () => {
      const { ctx, page, errors } = await openApp({
        plan: PLAN8,
        initScript: midiStub(false),
        kind: 'midi',
        pace: 1,
      });
      await chooseOutput(page, 'drive-midi-port', 'stub-out-1');
      await waitOpen(page);
      await page.click('[data-testid="drive-calibrate"]');
      for (const r of [0.003, 2.007, 5.013, 7.017]) await typeReading(page, r);
      await waitCalibrated(page);
      await page.click('[data-testid="start-hands-off"]');
      await waitRows(page, 2);
      // The page goes away (pagehide, as when the window closes), then the stub's record is read back.
      await page.reload();
      const sent: number[][] = await page.evaluate(() =>
        JSON.parse(sessionStorage.getItem('__midiSent') ?? '[]'),
      );
      console.log('e2e drive MIDI bytes, window closed mid-run:', JSON.stringify(sent.slice(-5)));
      const lastOn = sent.slice(0, -3).findLast((m) => m[0] === 0x90);
      if (!lastOn) throw new Error(`no note-on before the close: ${JSON.stringify(sent)}`);
      // MIDI 1.0, channel 1: the step's note off (0x80), the 0 V note (36) on (0x90) and off; nothing after.
      expect(lastOn[1]).toBeGreaterThan(36);
      expect(sent.slice(-3)).toEqual(backToRest(lastOn[1]));
      expect(errors).toEqual([]);
      await ctx.close();
    },
  );

  it(
    'faults: MIDI access refused mid-run gives a clear message, keeps the run and leaves the drive at 0 V',
    { tags: ['real-time'], timeout: 400_000 },
    async () => {
      const { ctx, page, errors } = await openApp({
        plan: [0, 1, 2, 3, 4],
        initScript: midiStub(true),
        runRows: 2,
        kind: 'midi',
        pace: 1,
      });
      await page.waitForSelector('[data-testid="drive-message"]');
      const text = await page.innerText('[data-testid="drive-message"]');
      console.log('e2e drive fault (MIDI refused):', text);
      expect(text).toContain('MIDI access was refused');
      expect(text).toContain('The run is kept with its captured steps, paused.');
      expect(await attr(page, 'run-prompt', 'data-phase')).toBe('paused');
      expect(await rowCount(page)).toBeGreaterThanOrEqual(2);
      expect(await attr(page, 'drive-status', 'data-open')).not.toBe('yes');
      expect(errors).toEqual([]);
      await ctx.close();
    },
  );

  it(
    'faults: readings that do not fit a line are refused, the run is kept and the converter goes back to its 0 V note',
    { tags: ['real-time'], timeout: 400_000 },
    async () => {
      const { ctx, page, errors } = await openApp({
        plan: PLAN8,
        initScript: midiStub(false),
        runRows: 2,
        kind: 'midi',
        pace: 1,
      });
      await waitOpen(page);
      await page.click('[data-testid="drive-calibrate"]');
      // The calibration's notes move the oscillator: the run is paused before the first one, its steps kept.
      await page.waitForSelector('[data-testid="drive-cal-paused-run"]');
      for (const r of [0.003, 2.007, 5.013, 6.2]) await typeReading(page, r);
      await page.waitForSelector('[data-testid="drive-message"]');
      const text = await page.innerText('[data-testid="drive-message"]');
      console.log('e2e drive fault (not a line):', text);
      expect(text).toContain('do not fit a line');
      expect(text).toContain('reading 4 (6.2 V)');
      expect(text).toContain('The drive is back at 0 V.');
      expect(await attr(page, 'drive-calibration', 'data-calibrated')).toBe('no');
      expect(await attr(page, 'run-prompt', 'data-phase')).toBe('paused');
      expect(await rowCount(page)).toBeGreaterThanOrEqual(2);
      expect(await attr(page, 'drive-status', 'data-at-rest')).toBe('yes');
      const sent = await midiSent(page);
      expect(sent.slice(-3)).toEqual(backToRest(120));
      expect(errors).toEqual([]);
      await ctx.close();
    },
  );

  it(
    'faults: the DC output device disappearing mid-run pauses the run, keeps its steps and stops the drive',
    { tags: ['real-time'], timeout: 400_000 },
    async () => {
      const { ctx, page, errors } = await openApp({
        plan: [0, 1, 2, 3, 4, 5],
        initScript: OUTPUT_STUB,
        kind: 'dc',
        pace: 1,
      });
      await chooseOutput(page, 'drive-dc-device', 'bench-dc-1');
      await waitOpen(page);
      // An output really giving 9.95 V at full scale and +2 mV: each reading follows the level sent.
      await page.click('[data-testid="drive-calibrate"]');
      let last = 0;
      for (let k = 0; k < 4; k++) {
        await page.waitForFunction(
          (i) =>
            document
              .querySelector('[data-testid="drive-cal-session"]')
              ?.getAttribute('data-reading-index') === String(i),
          k,
        );
        const level = Number(await attr(page, 'drive-status', 'data-output-level'));
        last = Math.round((9.95 * level + 0.002) * 1000) / 1000;
        await typeReading(page, last);
      }
      // The hold check: once the level has been held its ten seconds, the meter reads the same (it stayed).
      await page.waitForFunction(() => {
        const due = document
          .querySelector('[data-testid="drive-cal-session"]')
          ?.getAttribute('data-hold-due-at-ms');
        return due !== null && due !== undefined && due !== '' && Date.now() >= Number(due);
      });
      await typeReading(page, last);
      await waitCalibrated(page);
      expect(await page.evaluate(() => (window as unknown as { __sinkIds: string[] }).__sinkIds)).toContain(
        'bench-dc-1',
      );
      await page.click('[data-testid="start-hands-off"]');
      await waitRows(page, 2);
      const before = await rowCount(page);
      await page.evaluate(() => (window as unknown as { __unplug(): void }).__unplug());
      await page.waitForSelector('[data-testid="drive-message"]');
      const text = await page.innerText('[data-testid="drive-message"]');
      console.log('e2e drive fault (device gone):', text);
      expect(text).toContain('output device was disconnected');
      expect(text).toContain('The run is kept with its captured steps, paused.');
      expect(text).toContain('The drive is back at 0 V.');
      await page.waitForFunction(
        () => document.querySelector('[data-testid="run-prompt"]')?.getAttribute('data-phase') === 'paused',
      );
      expect(await rowCount(page)).toBeGreaterThanOrEqual(before);
      expect(await attr(page, 'drive-status', 'data-open')).not.toBe('yes');
      expect(await attr(page, 'hands-off-state', 'data-active')).toBe('no');
      await page.screenshot({ path: path.join(ARTIFACTS, 'drive-fault-device-gone-1280x900.png') });
      expect(errors).toEqual([]);
      await ctx.close();
    },
  );

  // A measurement, not a check of the issue: run by `npm run bench:drive` (vitest.bench-drive.config.ts),
  // not by `npm test`, where it would add a minute and a half of browser time.
  it.runIf(BENCH)(
    'bench: the same 8-step run driven by keypresses (typing each voltage), for the timing beside hands-off',
    async () => {
      const { ctx, page } = await openApp({ plan: PLAN8, simDrive: true });
      await simCalibrate(page);
      const t0 = Date.now();
      await page.click('[data-testid="start-run"]');
      const rowMs: number[] = [];
      for (let i = 0; i < PLAN8.length; i++) {
        await waitRows(page, i);
        await page.fill('[data-testid="drive-set-volts"]', String(PLAN8[i]));
        await page.press('[data-testid="drive-set-volts"]', 'Enter');
        await waitRows(page, i + 1);
        rowMs.push(Date.now() - t0);
      }
      benchLine('keypresses', Date.now() - t0, rowMs);
      expect(await rowCount(page)).toBe(PLAN8.length);
      await ctx.close();
    },
    480_000,
  );
});
