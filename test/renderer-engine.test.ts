/**
 * The engine the worker hosts, driven directly in Node: a guided run over the simulated oscillator, a
 * WAV recording through decodeWav, the host side of the run (pending captures, moving a run onto a new
 * clock), the page's folding of engine messages, and the readout's digits. The reference for pitch is
 * the simulator's own truth (dsp/simulate.ts trueHz / StepTruth), in cents after A. J. Ellis (1885).
 */
import { describe, expect, it } from 'vitest';
import wavefile from 'wavefile';
import { createRun, runReducer, validateRunState, type RunState } from '../dsp/run.ts';
import { findDemoUnit, planSchedule, renderOscillator, trueHz } from '../dsp/simulate.ts';
import { EngineCore } from '../renderer/src/engine/core.ts';
import { foldEngineMessage, HISTORY_SECONDS, INITIAL_VIEW } from '../renderer/src/engine/client.ts';
import type { FromEngine, RunSnapshot } from '../renderer/src/engine/protocol.ts';
import { analyzeRecording } from '../renderer/src/engine/recording.ts';
import { answerPendingCapture, feedReading, rebaseRun } from '../renderer/src/engine/run-host.ts';
import { formatHz, hzDecimalsForHundredthCent } from '../renderer/src/lib/format.ts';
import { parseStartupParams } from '../renderer/src/lib/params.ts';
import { simOptions, simSettingsForUnit } from '../renderer/src/lib/sim-settings.ts';

const cents = (hz: number, ref: number) => 1200 * Math.log2(hz / ref);

function collect() {
  const messages: FromEngine[] = [];
  let t = 0;
  const core = new EngineCore({ post: (m) => void messages.push(m), nowMs: () => (t += 0.01) });
  const lastRun = (): RunSnapshot | null => {
    for (let i = messages.length - 1; i >= 0; i--) {
      const m = messages[i];
      if (m.type === 'run') return m.run;
      if (m.type === 'tick' && m.run !== undefined) return m.run;
    }
    return null;
  };
  return { core, messages, lastRun };
}

describe('EngineCore with the simulated oscillator', () => {
  it('walks a plan hands-free, moving the simulator to each voltage, within 0.1 cent of the true pitch', () => {
    const settings = simSettingsForUnit('ol3-0417');
    const options = simOptions(settings);
    const { core, lastRun } = collect();
    core.handle({ type: 'source-sim', sampleRateHz: 48_000, options, volts: 0 });
    core.handle({ type: 'run-start', plan: { id: 'custom', label: 'test', volts: [0, 1, 2] } });
    for (let i = 0; i < 400 && lastRun()?.state.phase !== 'finished'; i++) core.tickSim(0.05);
    const run = lastRun();
    expect(run?.state.phase).toBe('finished');
    for (const st of run!.state.steps) {
      expect(st.capture?.source).toBe('host');
      const off = cents(st.capture!.hz, trueHz(st.nominalVolts, options));
      expect(Math.abs(off), `${st.nominalVolts} V off by ${off} cents`).toBeLessThan(0.1);
      // Step change (the simulator's new voltage) to stored capture: settle, then a 1 s capture window.
      const latency = run!.capturedAt[st.index]! - run!.stepStartedAt[st.index]!;
      expect(latency).toBeGreaterThan(1);
      expect(latency).toBeLessThan(3);
      expect(run!.details[st.index]?.harmonicsUsed).toBeGreaterThan(0);
    }
  });

  it('pauses a live run when the source goes away and keeps its captures', () => {
    const options = simOptions(simSettingsForUnit('ol3-0412'));
    const { core, lastRun } = collect();
    core.handle({ type: 'source-sim', sampleRateHz: 48_000, options, volts: 0 });
    core.handle({ type: 'run-start', plan: { id: 'custom', label: 'test', volts: [0, 1, 2] } });
    for (let i = 0; i < 200 && (lastRun()?.state.steps[0].capture ?? null) === null; i++) core.tickSim(0.05);
    core.handle({ type: 'source-stop', reason: 'unplugged' });
    const run = lastRun();
    expect(run?.state.phase).toBe('paused');
    expect(run?.state.steps[0].status).toBe('captured');
    expect(validateRunState(JSON.parse(JSON.stringify(run!.state))).kind).toBe('ok');
  });

  it('analyses a WAV recording (decodeWav in the engine), each step within 0.1 cent of the truth', () => {
    const unit = findDemoUnit('ol3-0423')!;
    const rec = renderOscillator({ ...unit.options, snrDb: 70 }, planSchedule([0, 2, 4], { holdSeconds: 3 }));
    const w = new wavefile.WaveFile();
    w.fromScratch(
      1,
      rec.sampleRateHz,
      '16',
      Int16Array.from(rec.samples, (x) => Math.round(x * 32767)),
    );
    const bytes = new Uint8Array(w.toBuffer()).buffer;
    const { core, messages, lastRun } = collect();
    core.handle({
      type: 'wav-analyze',
      bytes,
      fileName: 'x.wav',
      channel: 1,
      plan: { id: 'r', label: 'r', volts: [0, 2, 4] },
    });
    const done = messages.find((m) => m.type === 'wav-done');
    expect(done?.type === 'wav-done' && done.ok).toBe(true);
    const run = lastRun();
    expect(run?.origin).toEqual({ kind: 'recording', fileName: 'x.wav' });
    run!.state.steps.forEach((st, i) => {
      // 16-bit PCM scales by 32767/32768 and quantises: amplitude only, the pitch is untouched.
      expect(Math.abs(cents(st.capture!.hz, rec.truth[i].recordedHz))).toBeLessThan(0.1);
    });
  });

  it('reports a WAV it cannot read, with the decoder’s message', () => {
    const { core, messages } = collect();
    core.handle({
      type: 'wav-analyze',
      bytes: new TextEncoder().encode('ID3\u0004').buffer as ArrayBuffer,
      fileName: 'a.mp3',
      channel: 1,
      plan: { id: 'r', label: 'r', volts: [0, 1] },
    });
    const done = messages.find((m) => m.type === 'wav-done');
    expect(done?.type === 'wav-done' && done.ok).toBe(false);
    expect(done?.type === 'wav-done' && done.message).toMatch(/not a WAV file/);
  });
});

describe('analyzeRecording', () => {
  it('captures a rendered schedule at 96 kHz within 0.1 cent of StepTruth.recordedHz', () => {
    const unit = findDemoUnit('ol3-0412')!;
    const rec = renderOscillator(
      { ...unit.options, sampleRateHz: 96_000, snrDb: 60 },
      planSchedule([1, 3], { holdSeconds: 3 }),
    );
    const r = analyzeRecording(rec.samples, rec.sampleRateHz, { id: 'x', label: 'x', volts: [1, 3] });
    expect(r.state.phase).toBe('finished');
    r.state.steps.forEach((st, i) =>
      expect(Math.abs(cents(st.capture!.hz, rec.truth[i].recordedHz))).toBeLessThan(0.1),
    );
  });
});

describe('run host', () => {
  const level = { rmsDbfs: -10, peakDbfs: -4, clippedFraction: 0 };
  const ok = (t: number, hz: number) => ({
    kind: 'ok' as const,
    hz,
    uncertaintyCents: 0.01,
    clarity: 0.99,
    level,
    windowSeconds: 0.1,
    harmonicsUsed: 10,
    timeSeconds: t,
  });

  function runToMeasuring(): RunState {
    let s = createRun([0, 1]);
    for (let k = 0; k < 200 && s.phase !== 'measuring'; k++)
      s = runReducer(s, { type: 'reading', reading: ok(k * 0.05, 110) });
    expect(s.phase).toBe('measuring');
    return s;
  }

  it('answers a pending capture with the measurer and stores it as the host’s', () => {
    const s = runToMeasuring();
    let asked: [number, number] | null = null;
    const r = answerPendingCapture(s, (a, b) => ((asked = [a, b]), ok(b, 110.001)));
    expect(asked).toEqual([s.pendingCapture!.startSeconds, s.pendingCapture!.endSeconds]);
    expect(r.state.steps[0].capture?.hz).toBe(110.001);
    expect(r.state.steps[0].capture?.source).toBe('host');
  });

  it('leaves the request pending while the span has not arrived, and falls back when unavailable', () => {
    const s = runToMeasuring();
    const waiting = answerPendingCapture(s, (_a, b) => ({
      kind: 'none',
      reason: 'warming-up',
      level,
      timeSeconds: b,
    }));
    expect(waiting.state.phase).toBe('measuring');
    const gone = answerPendingCapture(s, (_a, b) => ({
      kind: 'none',
      reason: 'no-pitch',
      level,
      timeSeconds: b,
    }));
    expect(gone.state.steps[0].capture?.source).toBe('live-mean');
  });

  it('feedReading reports the step it captured', () => {
    let s = createRun([0, 1]);
    let captured: number | null = null;
    for (let k = 0; k < 200 && captured === null; k++) {
      const f = feedReading(s, ok(k * 0.05, 110), (_a, b) => ok(b, 110));
      s = f.state;
      captured = f.capturedStep;
    }
    expect(captured).toBe(0);
  });

  it('rebaseRun gives a valid, paused run on a fresh clock with the captures kept', () => {
    let s = runToMeasuring();
    s = answerPendingCapture(s, (_a, b) => ok(b, 110)).state;
    const r = rebaseRun(s);
    expect(validateRunState(JSON.parse(JSON.stringify(r)))).toMatchObject({ kind: 'ok' });
    expect(r.phase).toBe('paused');
    expect(r.lastSeconds).toBeNull();
    expect(r.current).toBe(1);
    expect(r.steps[0].capture?.hz).toBe(110);
    // Readings from the new clock (starting again at 0) are taken after resuming.
    const resumed = runReducer(r, { type: 'resume' });
    expect(runReducer(resumed, { type: 'reading', reading: ok(0.05, 220) }).lastSeconds).toBe(0.05);
  });
});

describe('page side', () => {
  it('keeps ten seconds of history and starts again on a new clock', () => {
    let v = INITIAL_VIEW;
    const level = { rmsDbfs: -10, peakDbfs: -4, clippedFraction: 0 };
    for (let k = 0; k <= 300; k++) {
      v = foldEngineMessage(v, {
        type: 'tick',
        reading: {
          kind: 'ok',
          hz: 110,
          uncertaintyCents: 0.01,
          clarity: 1,
          level,
          windowSeconds: 0.1,
          harmonicsUsed: 8,
          timeSeconds: k * 0.05,
        },
        streamSeconds: k * 0.05,
        settled: true,
        simVolts: null,
      });
    }
    expect(v.history[v.history.length - 1].t - v.history[0].t).toBeLessThanOrEqual(HISTORY_SECONDS);
    expect(v.history.length).toBeGreaterThan(195);
    v = foldEngineMessage(v, {
      type: 'tick',
      reading: { kind: 'none', reason: 'warming-up', level, timeSeconds: 0.05 },
      streamSeconds: 0.05,
      settled: false,
      simVolts: null,
    });
    expect(v.history).toEqual([]);
  });

  // One unit in the last place is at most 0.01 cent: 10^−d ≤ f·(2^(0.01/1200) − 1) (cents, Ellis 1885).
  it.each([8.1758, 16.3516, 32.7032, 261.6256, 440, 4186.009, 16_744.04])(
    'shows %f Hz to a hundredth of a cent',
    (hz) => {
      const d = hzDecimalsForHundredthCent(hz);
      expect(10 ** -d).toBeLessThanOrEqual(hz * (2 ** (0.01 / 1200) - 1));
      expect(10 ** -(d - 1)).toBeGreaterThan(hz * (2 ** (0.01 / 1200) - 1));
      expect(formatHz(hz).split('.')[1]?.length ?? 0).toBe(d);
    },
  );

  it('reads the start-up query and reports bad values', () => {
    expect(parseStartupParams('?input=sim&plan=0,1,2,3&unit=ol3-0417&rate=96000')).toEqual({
      input: 'sim',
      planText: '0,1,2,3',
      unitId: 'ol3-0417',
      simRateHz: 96_000,
      problems: [],
    });
    const bad = parseStartupParams('?plan=0,0&unit=nope&rate=12');
    expect(bad.input).toBe('device');
    expect(bad.problems).toHaveLength(3);
  });
});
