// The soak run that test/soak.test.ts bundles and runs in a child `node --expose-gc`: hours of simulated
// audio through the live path (simulated oscillator → PitchTracker → calibration run, the run's capture
// requests answered with the tracker's settled average by the app's own host code), as fast as the machine
// goes. It prints one JSON line of figures at the end; the test asserts on them.
//
// Usage: node --expose-gc soak-run.mjs [audioSeconds]
//
// Choices that keep it lean, and why they do not weaken it:
// - 22 050 Hz: the tracker's cost grows with the sample rate and the synthesis cost with the harmonics below
//   the band limit; the pitch path is the same code at every rate (an ordinary interface rate).
// - 10 readings per second (the tracker's default is 20): memory and drift are per reading or per sample,
//   not per second, so half as many readings shows the same trends over the same audio.
// - A mid frequency: the semitone check 3 V…4 V of demo unit OL3-0412, 262–523 Hz, where live windows are
//   the 100 ms minimum.
// - One simulated minute between heap samples, each after a forced collection.
// - Every 10 s of audio the run is written as its autosave would be (serializeRun) and carried on from what
//   was read back (deserializeRun), so a long run's saved state is checked to stay bounded and resumable.
import { trueHz, createOscillatorStream, findDemoUnit } from '../dsp/sim/index.ts';
import { PitchTracker } from '../dsp/pitch/index.ts';
import { createRun, deserializeRun, serializeRun, type RunState } from '../dsp/calibration/index.ts';
import { semitonePlan } from '../dsp/calibration/index.ts';
import type { PitchReading } from '../dsp/pitch/index.ts';
import { feedReading } from '../renderer/src/engine/run-host.ts';

const AUDIO_SECONDS = Number(process.argv[2] ?? 7200);
const SAMPLE_RATE_HZ = 22_050;
const READINGS_PER_SECOND = 10;
const BLOCK = 441; // 20 ms, a typical audio callback
/** When the heap counts as settled: after the first 10 minutes of audio. */
const SETTLE_SECONDS = Math.min(600, AUDIO_SECONDS / 2);
/** How long the technician takes to turn to the next voltage once the run asks, seconds (invented). */
const REACTION_SECONDS = 0.4;
/** A live reading is compared with the truth once the voltage has held this long (thermal tail gone), s. */
const STABLE_SECONDS = 1.5;
/** The last stretch whose readings count as "at the end", seconds. */
const END_SECONDS = Math.min(600, AUDIO_SECONDS / 2);

const gc = (globalThis as { gc?: () => void }).gc;
if (!gc) {
  console.error('soak-run: run node with --expose-gc');
  process.exit(2);
}

const unit = findDemoUnit('ol3-0412');
if (!unit) throw new Error('demo unit ol3-0412 is missing');
// The interface: 60 dB SNR (a decent line input; common practice, no source), no hum, clean clock.
const oscOptions = { ...unit.options, sampleRateHz: SAMPLE_RATE_HZ, snrDb: 60 };
const osc = createOscillatorStream(oscOptions);
const tracker = new PitchTracker({ sampleRateHz: SAMPLE_RATE_HZ, readingsPerSecond: READINGS_PER_SECOND });
const plan = semitonePlan(3);
const cents = (hz: number, ref: number) => 1200 * Math.log2(hz / ref);
const truthHz = new Map<number, number>(plan.volts.map((v) => [v, trueHz(v, oscOptions)]));

let run: RunState = createRun(plan);
let cv = plan.volts[0];
let cvSince = 0;
/** What the technician will do next (set in the reading callback, acted on between blocks). */
const tech = {
  pendingCv: null as { volts: number; at: number } | null,
  restartAt: null as number | null,
};

const figures = {
  audioSeconds: 0,
  wallSeconds: 0,
  speedTimesRealTime: 0,
  readings: 0,
  okReadings: 0,
  nanReadings: 0,
  nanInRunState: 0,
  runsFinished: 0,
  captures: 0,
  hostCaptures: 0,
  liveMeanCaptures: 0,
  worstCaptureCents: 0,
  worstCaptureCentsAtEnd: 0,
  worstLiveCentsFirst: 0,
  worstLiveCentsEnd: 0,
  rmsLiveCentsFirst: 0,
  rmsLiveCentsEnd: 0,
  heapAtSettleBytes: 0,
  heapAtEndBytes: 0,
  heapMinAfterSettleBytes: Infinity,
  heapMaxAfterSettleBytes: 0,
  rssAtEndBytes: 0,
  autosaves: 0,
  maxAutosaveBytes: 0,
  heapSamples: [] as Array<[number, number]>,
};
let sumSqFirst = 0;
let nFirst = 0;
let sumSqEnd = 0;
let nEnd = 0;

function hasNaN(r: PitchReading): boolean {
  const nums: number[] = [r.timeSeconds, r.level.rmsDbfs, r.level.peakDbfs, r.level.clippedFraction];
  if (r.kind === 'ok') nums.push(r.hz, r.uncertaintyCents, r.clarity, r.windowSeconds, r.harmonicsUsed);
  return nums.some((x) => Number.isNaN(x)) || (r.kind === 'ok' && !(Number.isFinite(r.hz) && r.hz > 0));
}

function runHasNaN(s: RunState): boolean {
  let bad = false;
  JSON.stringify(s, (_k, v: unknown) => {
    if (typeof v === 'number' && !Number.isFinite(v)) bad = true;
    return v;
  });
  return bad;
}

function onReading(r: PitchReading, now: number): void {
  figures.readings++;
  if (hasNaN(r)) figures.nanReadings++;
  if (r.kind === 'ok') {
    figures.okReadings++;
    if (now - cvSince >= STABLE_SECONDS && tech.pendingCv === null) {
      const e = Math.abs(cents(r.hz, truthHz.get(cv) ?? NaN));
      if (now < END_SECONDS) {
        figures.worstLiveCentsFirst = Math.max(figures.worstLiveCentsFirst, e);
        sumSqFirst += e * e;
        nFirst++;
      }
      if (now >= AUDIO_SECONDS - END_SECONDS) {
        figures.worstLiveCentsEnd = Math.max(figures.worstLiveCentsEnd, e);
        sumSqEnd += e * e;
        nEnd++;
      }
    }
  }
  if (tech.restartAt !== null) return; // between runs: the technician is resetting the voltage
  const f = feedReading(run, r, (a, b) => tracker.averageOfSpan(a, b));
  run = f.state;
  if (f.capturedStep !== null) {
    const cap = run.steps[f.capturedStep].capture;
    if (cap) {
      figures.captures++;
      if (cap.source === 'host') figures.hostCaptures++;
      else figures.liveMeanCaptures++;
      const e = Math.abs(cents(cap.hz, truthHz.get(plan.volts[f.capturedStep]) ?? NaN));
      figures.worstCaptureCents = Math.max(figures.worstCaptureCents, Number.isNaN(e) ? Infinity : e);
      if (now >= AUDIO_SECONDS - END_SECONDS)
        figures.worstCaptureCentsAtEnd = Math.max(figures.worstCaptureCentsAtEnd, e);
    }
  }
  if (figures.readings % 100 === 0) {
    if (runHasNaN(run)) figures.nanInRunState++;
    const saved = serializeRun(run);
    figures.autosaves++;
    figures.maxAutosaveBytes = Math.max(figures.maxAutosaveBytes, saved.length);
    run = deserializeRun(saved);
  }
  // The technician: turn to the voltage of the step the run waits for, after a moment.
  if (run.phase === 'apply-voltage' && plan.volts[run.current] !== cv && tech.pendingCv === null) {
    tech.pendingCv = { volts: plan.volts[run.current], at: now + REACTION_SECONDS };
  }
  if (run.phase === 'finished') {
    figures.runsFinished++;
    // Set the first voltage, then start the next run once it has been applied.
    tech.pendingCv = { volts: plan.volts[0], at: now + REACTION_SECONDS };
    tech.restartAt = now + REACTION_SECONDS + 0.2;
  }
}

function sampleHeap(now: number): void {
  gc!();
  const heap = process.memoryUsage().heapUsed;
  figures.heapSamples.push([Math.round(now), heap]);
  if (now >= SETTLE_SECONDS) {
    if (figures.heapAtSettleBytes === 0) figures.heapAtSettleBytes = heap;
    figures.heapMinAfterSettleBytes = Math.min(figures.heapMinAfterSettleBytes, heap);
    figures.heapMaxAfterSettleBytes = Math.max(figures.heapMaxAfterSettleBytes, heap);
  }
  figures.heapAtEndBytes = heap;
}

const block = new Float32Array(BLOCK);
const totalBlocks = Math.round((AUDIO_SECONDS * SAMPLE_RATE_HZ) / BLOCK);
const blocksPerMinute = Math.round((60 * SAMPLE_RATE_HZ) / BLOCK);
const started = performance.now();
for (let b = 0; b < totalBlocks; b++) {
  const now = (b * BLOCK) / SAMPLE_RATE_HZ;
  if (tech.pendingCv !== null && now >= tech.pendingCv.at) {
    cv = tech.pendingCv.volts;
    cvSince = now;
    tech.pendingCv = null;
  }
  if (tech.restartAt !== null && now >= tech.restartAt) {
    run = createRun(plan);
    tech.restartAt = null;
  }
  osc.render(block, cv);
  const end = ((b + 1) * BLOCK) / SAMPLE_RATE_HZ;
  tracker.push(block, (r) => onReading(r, end));
  if ((b + 1) % blocksPerMinute === 0) sampleHeap(end);
}
sampleHeap(AUDIO_SECONDS);
figures.audioSeconds = tracker.elapsedSeconds;
figures.wallSeconds = (performance.now() - started) / 1000;
figures.speedTimesRealTime = figures.audioSeconds / figures.wallSeconds;
figures.rmsLiveCentsFirst = Math.sqrt(sumSqFirst / Math.max(1, nFirst));
figures.rmsLiveCentsEnd = Math.sqrt(sumSqEnd / Math.max(1, nEnd));
figures.rssAtEndBytes = process.memoryUsage().rss;
console.log(JSON.stringify(figures));
