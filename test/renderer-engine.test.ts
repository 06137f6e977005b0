/**
 * The engine the worker hosts, driven directly in Node: a guided run over the simulated oscillator, a
 * WAV recording through decodeWav, the host side of the run (pending captures, moving a run onto a new
 * clock), the page's folding of engine messages, and the readout's digits. The reference for pitch is
 * the simulator's own truth (dsp/sim/simulate.ts trueHz / StepTruth), in cents after A. J. Ellis (1885).
 */
import { describe, expect, it } from 'vitest';
import { createRun, runReducer, validateRunState, type RunState } from '../dsp/calibration/index.ts';
import { findDemoUnit, planSchedule, renderOscillator, trueHz } from '../dsp/sim/index.ts';
import { foldEngineMessage, HISTORY_SECONDS, INITIAL_VIEW } from '../renderer/src/engine/client.ts';
import { analyzeRecording } from '../dsp/recording/index.ts';
import { analyzeWavBytes } from '../renderer/src/engine/wav-analysis.ts';
import { answerPendingCapture, feedReading } from '../renderer/src/engine/run-host.ts';
import { formatHz, hzDecimalsForHundredthCent } from '../dsp/format/index.ts';
import { parseStartupParams } from '../renderer/src/lib/params.ts';
import { simOptions, simSettingsForUnit } from '../renderer/src/lib/sim-settings.ts';
import { wavBytes } from './helpers/wav.ts';
import { engineHarness } from './helpers/engine.ts';

const cents = (hz: number, ref: number) => 1200 * Math.log2(hz / ref);

describe('EngineCore with the simulated oscillator', () => {
  it('walks a plan hands-free, moving the simulator to each voltage, within 0.1 cent of the true pitch', () => {
    const settings = simSettingsForUnit('ol3-0417');
    const options = simOptions(settings);
    const { core, lastRun } = engineHarness();
    core.handle({ type: 'source-sim', sampleRateHz: 48_000, options, volts: 0 });
    core.handle({ type: 'run-start', plan: { id: 'custom', label: 'test', volts: [0, 1, 2] } });
    for (let i = 0; i < 400 && lastRun()?.state.phase !== 'finished'; i++) core.tickSim(0.05);
    const run = lastRun();
    expect(run?.state.phase).toBe('finished');
    for (const st of run!.state.steps) {
      expect(st.capture?.source).toBe('host');
      const off = cents(st.capture!.hz, trueHz(st.nominalVolts, options));
      expect(Math.abs(off), `${st.nominalVolts} V off by ${off} cents`).toBeLessThan(0.1);
      // Step change (the simulator's new voltage) to stored capture: settle, a 1 s capture window, and
      // as long as the unit's thermal tail (0.1 cent/V, τ = 0.8 s) needs to stop creeping measurably,
      // at most the 6 s settle timeout.
      const latency = run!.capturedAt[st.index]! - run!.stepStartedAt[st.index]!;
      expect(latency).toBeGreaterThan(1);
      expect(latency).toBeLessThan(1.5 + 1 + 6);
      expect(st.capture!.flags).toEqual([]);
      expect(run!.details[st.index]?.harmonicsUsed).toBeGreaterThan(0);
    }
  });

  it('a run started before the input opens waits for it, then runs; a later restart pauses with a reason', () => {
    const options = simOptions(simSettingsForUnit('ol3-0412'));
    const { core, lastRun } = engineHarness();
    core.handle({ type: 'run-start', plan: { id: 'custom', label: 'test', volts: [0, 1, 2] } });
    expect(lastRun()?.state.phase).toBe('apply-voltage');
    expect(lastRun()?.waitingForInput).toBe(true);
    core.handle({ type: 'source-sim', sampleRateHz: 48_000, options, volts: 0 });
    expect(lastRun()?.state.phase).not.toBe('paused');
    for (let i = 0; i < 300 && (lastRun()?.state.steps[0].capture ?? null) === null; i++) core.tickSim(0.05);
    expect(lastRun()?.state.steps[0].status).toBe('captured');
    // With a step captured, a new stream clock pauses the run, and the snapshot says why.
    core.handle({ type: 'source-sim', sampleRateHz: 44_100, options, volts: 0 });
    expect(lastRun()?.state.phase).toBe('paused');
    expect(lastRun()?.pausedReason).toMatch(/sample rate changed/);
    core.handle({ type: 'run-event', event: { type: 'resume' } });
    expect(lastRun()?.state.phase).not.toBe('paused');
    expect(lastRun()?.pausedReason).toBeNull();
  });

  it('pauses a live run when the source goes away and keeps its captures', () => {
    const options = simOptions(simSettingsForUnit('ol3-0412'));
    const { core, lastRun } = engineHarness();
    core.handle({ type: 'source-sim', sampleRateHz: 48_000, options, volts: 0 });
    core.handle({ type: 'run-start', plan: { id: 'custom', label: 'test', volts: [0, 1, 2] } });
    for (let i = 0; i < 200 && (lastRun()?.state.steps[0].capture ?? null) === null; i++) core.tickSim(0.05);
    core.handle({ type: 'source-stop', reason: 'unplugged' });
    const run = lastRun();
    expect(run?.state.phase).toBe('paused');
    expect(run?.state.steps[0].status).toBe('captured');
    expect(validateRunState(JSON.parse(JSON.stringify(run!.state))).kind).toBe('ok');
  });

  it('moves a run onto a new sample rate: captures kept, paused, the change reported, then resumes', () => {
    const options = simOptions(simSettingsForUnit('ol3-0412'));
    const { core, messages, lastRun } = engineHarness();
    core.handle({ type: 'source-sim', sampleRateHz: 48_000, options, volts: 0 });
    core.handle({ type: 'run-start', plan: { id: 'custom', label: 'test', volts: [0, 1, 2] } });
    for (let i = 0; i < 200 && (lastRun()?.state.steps[0].capture ?? null) === null; i++) core.tickSim(0.05);
    const hz0 = lastRun()!.state.steps[0].capture!.hz;
    core.handle({ type: 'source-sim', sampleRateHz: 96_000, options, volts: 0 });
    const src = messages.filter((m) => m.type === 'source').at(-1);
    expect(src).toMatchObject({ sampleRateHz: 96_000, previousSampleRateHz: 48_000, runRebased: true });
    expect(lastRun()?.state.phase).toBe('paused');
    expect(lastRun()?.state.steps[0].capture?.hz).toBe(hz0);
    core.handle({ type: 'run-event', event: { type: 'resume' } });
    for (let i = 0; i < 400 && lastRun()?.state.phase !== 'finished'; i++) core.tickSim(0.05);
    const run = lastRun()!;
    expect(run.state.phase).toBe('finished');
    // The steps captured at 96 kHz agree with the simulator's truth too (dsp/sim/simulate.ts trueHz).
    for (const st of run.state.steps)
      expect(Math.abs(cents(st.capture!.hz, trueHz(st.nominalVolts, options)))).toBeLessThan(0.1);
  });

  it('analyses a WAV with analyzeRecording in the engine and keeps the live run, paused', () => {
    const unit = findDemoUnit('ol3-0423')!;
    const rec = renderOscillator({ ...unit.options, snrDb: 70 }, planSchedule([0, 2, 4], { holdSeconds: 3 }));
    const bytes = new Uint8Array(wavBytes([rec.samples], rec.sampleRateHz, '16')).buffer;
    const { core, messages, lastRun } = engineHarness();
    core.handle({
      type: 'source-sim',
      sampleRateHz: 48_000,
      options: simOptions(simSettingsForUnit('ol3-0412')),
      volts: 0,
    });
    core.handle({ type: 'run-start', plan: { id: 'custom', label: 'live', volts: [0, 1] } });
    core.tickSim(0.5);
    core.handle({
      type: 'wav-analyze',
      bytes,
      fileName: 'x.wav',
      request: { points: [0, 2, 4], channel: 1 },
    });
    const done = messages.find((m) => m.type === 'wav-done');
    expect(done?.type === 'wav-done' && done.outcome.kind).toBe('ok');
    if (done?.type !== 'wav-done' || done.outcome.kind !== 'ok') return;
    done.outcome.analysis.steps.forEach((st, i) => {
      // 16-bit PCM scales by 32767/32768 and quantises: amplitude only, the pitch is untouched.
      expect(Math.abs(cents(st.hz, rec.truth[i].recordedHz))).toBeLessThan(0.1);
    });
    // The live run is still the user's two-step plan, paused.
    expect(lastRun()?.state.plan.volts).toEqual([0, 1]);
    expect(lastRun()?.state.phase).toBe('paused');
  });

  it('reports a WAV it cannot read, with the decoder’s message', () => {
    const { core, messages } = engineHarness();
    core.handle({
      type: 'wav-analyze',
      bytes: new TextEncoder().encode('ID3\u0004').buffer as ArrayBuffer,
      fileName: 'a.mp3',
      request: { points: [0, 1], channel: 1 },
    });
    const done = messages.find((m) => m.type === 'wav-done');
    expect(done?.type === 'wav-done' && done.outcome.kind).toBe('error');
    expect(done?.type === 'wav-done' && done.outcome.kind === 'error' && done.outcome.message).toMatch(
      /not a WAV file/,
    );
  });
});

describe('analyzeWavBytes (the worker side of Open WAV…)', () => {
  // The reference is dsp/recording/recording.ts analyzeRecording itself, the analysis `spanmeter analyze` runs:
  // the app must give the same Hz, bit for bit, for the same file and options.
  it.each([
    { unit: 'ol3-0412', rate: 48_000, volts: [0, 1, 2, 3] },
    { unit: 'ol3-0423', rate: 96_000, volts: [1, 3] },
  ])('returns the same Hz as analyzeRecording for $unit at $rate Hz', ({ unit, rate, volts }) => {
    const u = findDemoUnit(unit)!;
    const rec = renderOscillator(
      { ...u.options, sampleRateHz: rate, snrDb: 60 },
      planSchedule(volts, { holdSeconds: 2.5 }),
    );
    // 32-bit float WAV holds the samples exactly, so both analyses see the same numbers.
    const out = analyzeWavBytes(wavBytes([rec.samples], rec.sampleRateHz, '32f'), {
      points: volts,
      channel: 1,
    });
    const ref = analyzeRecording(rec.samples, rec.sampleRateHz, { points: volts });
    expect(out.kind).toBe('ok');
    expect(ref.kind).toBe('ok');
    if (out.kind !== 'ok' || ref.kind !== 'ok') return;
    expect(out.analysis.steps.map((s) => s.hz)).toEqual(ref.steps.map((s) => s.hz));
    expect(out.analysis.fit?.scaleErrorCentsPerOctave).toBe(ref.fit?.scaleErrorCentsPerOctave);
    expect(out.file).toMatchObject({ sampleRateHz: rate, channelCount: 1, channelNumber: 1 });
    // And the simulator's truth (dsp/sim/simulate.ts StepTruth) within 0.1 cent (Ellis, 1885).
    out.analysis.steps.forEach((s, i) =>
      expect(Math.abs(cents(s.hz, rec.truth[i].recordedHz))).toBeLessThan(0.1),
    );
  });

  it('passes settle and a4 through, as the command line does', () => {
    const u = findDemoUnit('ol3-0412')!;
    const rec = renderOscillator({ ...u.options, snrDb: 60 }, planSchedule([0, 1], { holdSeconds: 2.5 }));
    const out = analyzeWavBytes(wavBytes([rec.samples], rec.sampleRateHz, '32f'), {
      points: [0, 1],
      channel: 1,
      settleSeconds: 0.8,
      a4Hz: 432,
    });
    expect(out.kind === 'ok' && [out.analysis.settleSeconds, out.analysis.a4Hz]).toEqual([0.8, 432]);
  });

  it('gives the typed plateau-count mismatch, naming how many plateaus were found and when', () => {
    const u = findDemoUnit('ol3-0412')!;
    const rec = renderOscillator({ ...u.options, snrDb: 60 }, planSchedule([0, 1, 2], { holdSeconds: 2.5 }));
    const out = analyzeWavBytes(wavBytes([rec.samples], rec.sampleRateHz, '32f'), {
      points: [0, 1],
      channel: 1,
    });
    expect(out.kind).toBe('error');
    if (out.kind !== 'error') return;
    expect(out.code).toBe('plateau-count-mismatch');
    expect(out.plateaus).toHaveLength(3);
    expect(out.message).toMatch(/^found 3 plateaus \(at \d+\.\d–\d+\.\d s, .*\) but 2 voltages were given$/);
  });

  it('refuses a channel the file does not have, and bad options, without throwing', () => {
    const bytes = wavBytes([new Float32Array(48_000).fill(0.1)], 48_000, '32f');
    const ch = analyzeWavBytes(bytes, { points: [0], channel: 2 });
    expect(ch.kind === 'error' && ch.message).toMatch(/channel/);
    const bad = analyzeWavBytes(bytes, { points: [0], channel: 1, a4Hz: 1000 });
    expect(bad).toMatchObject({ kind: 'error', code: 'bad-request' });
    expect(bad.kind === 'error' && bad.message).toMatch(
      /a4Hz must be a finite number from 380 to 500, got 1000/,
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

  it('the rebase event gives a valid, paused run on a fresh clock with the captures kept', () => {
    let s = runToMeasuring();
    s = answerPendingCapture(s, (_a, b) => ok(b, 110)).state;
    const r = runReducer(s, { type: 'rebase' });
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
      simPace: 1,
      drive: null,
      problems: [],
    });
    const bad = parseStartupParams('?plan=0,0&unit=nope&rate=12');
    expect(bad.input).toBe('device');
    expect(bad.problems).toHaveLength(3);
    expect(parseStartupParams('?input=sim&drive=sim').drive).toBe('sim');
    expect(parseStartupParams('?input=sim&pace=4').simPace).toBe(4);
    for (const pace of ['0', '9', '2.5', 'fast'])
      expect(parseStartupParams(`?input=sim&pace=${pace}`)).toMatchObject({
        simPace: 1,
        problems: [`pace in the address: "${pace}" is not a whole number from 1 to 8`],
      });
    expect(parseStartupParams('?drive=sim').problems).toEqual([
      'drive=sim needs input=sim: the simulated drive is patched into the simulated oscillator',
    ]);
  });
});
