import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { mean, sampleStandardDeviation } from 'simple-statistics';
import { presetPlan } from '../dsp/calibration/index.ts';
import type { PitchReading } from '../dsp/pitch/index.ts';
import {
  DEFAULT_RUN_OPTIONS,
  RunStateError,
  createRun,
  deserializeRun,
  estimateOctavesPerVolt,
  expectedPitch,
  runCaptures,
  restoreInfiniteDof,
  runReducer,
  serializeRun,
  validateRunState,
  type RunEvent,
  type RunState,
  type StepCapture,
  WINDOW_MARGIN_CENTS,
} from '../dsp/calibration/index.ts';
import { gaussianNoise } from './signals.ts';
import { noReading, okReading, readingStream } from './helpers/readings.ts';

// ---------------------------------------------------------------------------------------------------
// Demo scenario (invented): unit 14 on the repair bench, an oscillator at 65.2 Hz at 0 V whose scale runs
// 0.998 octaves per volt. At 1 V/oct one volt is one octave, 1200 cents (docs/facts.md).

const OPV = 0.998;
const unitHz = (v: number) => 65.2 * Math.pow(2, OPV * v);
const cents = (hz: number, ref: number) => 1200 * Math.log2(hz / ref);
const RATE = 20;

/** What the user does: apply a voltage (with an optional overshoot and thermal tail), or unplug. */
interface Act {
  /** Applied voltage, V; null for silence. */
  v: number | null;
  seconds: number;
  /** Overshoot on arrival, cents, held `overshootSeconds`. */
  overshootCents?: number;
  overshootSeconds?: number;
  /** Thermal tail: creep on arrival, cents, decaying with `tauSeconds`. */
  creepCents?: number;
  tauSeconds?: number;
  /** Glide time from the previous pitch, seconds. Default 0.2. */
  glideSeconds?: number;
}

interface Session {
  readings: PitchReading[];
  truthAt: (t: number) => number | null;
  /** Start time of each act. */
  starts: number[];
}

function session(acts: Act[], opts: { sigma?: number; seed?: number; t0?: number } = {}): Session {
  const sigma = opts.sigma ?? 0.02;
  const t0 = opts.t0 ?? 0;
  const starts: number[] = [];
  let total = t0;
  for (const a of acts) {
    starts.push(total);
    total += a.seconds;
  }
  const truthAt = (t: number): number | null => {
    let i = acts.length - 1;
    while (i > 0 && t < starts[i]) i--;
    const a = acts[i];
    if (a.v === null) return null;
    const dt = t - starts[i];
    const target = unitHz(a.v);
    let prev: number | null = null;
    for (let j = i - 1; j >= 0 && prev === null; j--)
      prev = acts[j].v === null ? null : unitHz(acts[j].v as number);
    const glide = prev === null ? 0 : (a.glideSeconds ?? 0.2);
    const over = a.overshootCents ?? 0;
    const overT = a.overshootSeconds ?? 0;
    const peak = target * Math.pow(2, over / 1200);
    if (dt < glide && prev !== null) return prev * Math.pow(peak / prev, dt / glide);
    if (dt < glide + overT) return peak;
    const settleDt = dt - glide - overT;
    return target * Math.pow(2, ((a.creepCents ?? 0) * Math.exp(-settleDt / (a.tauSeconds ?? 1))) / 1200);
  };
  const readings = readingStream(truthAt, total, {
    rate: RATE,
    sigmaCents: sigma,
    seed: opts.seed ?? 1,
    fromSeconds: t0,
  });
  return { readings, truthAt, starts };
}

/** The host's precise long average over a window: the mean of the true pitch (in cents) on a 1 ms grid. */
function hostAverage(truthAt: (t: number) => number | null, start: number, end: number): number | null {
  let sum = 0;
  let n = 0;
  let ref = 0;
  for (let t = start; t <= end + 1e-12; t += 0.001) {
    const f = truthAt(t);
    if (f === null) continue;
    if (n === 0) ref = f;
    sum += cents(f, ref);
    n++;
  }
  return n === 0 ? null : ref * Math.pow(2, sum / n / 1200);
}

/** Applies an event, checking purity and the JSON round trip when asked. */
function apply(s: RunState, e: RunEvent, check = false): RunState {
  const before = check ? serializeRun(s) : '';
  const next = runReducer(s, e);
  if (check) {
    expect(serializeRun(s)).toBe(before); // the input is untouched
    const rt = deserializeRun(serializeRun(next));
    expect(rt).toEqual(next);
    // Plain JSON, but for a capture's unknown degrees of freedom (Infinity, written as null).
    expect(restoreInfiniteDof(JSON.parse(JSON.stringify(next)))).toEqual(next);
  }
  return next;
}

interface DriveOptions {
  host?: 'ok' | 'unavailable' | 'silent';
  check?: boolean;
  /** Control events to send just before the reading at this index. */
  at?: Record<number, RunEvent[]>;
  /** Called after each reading's event. */
  each?: (s: RunState, r: PitchReading) => void;
}

/** Feeds a session to a run; the host answers each pending capture at once. */
function drive(s: RunState, sess: Session, o: DriveOptions = {}): RunState {
  const host = o.host ?? 'ok';
  sess.readings.forEach((r, k) => {
    for (const e of o.at?.[k] ?? []) s = apply(s, e, o.check);
    s = apply(s, { type: 'reading', reading: r }, o.check);
    o.each?.(s, r);
    const pc = s.pendingCapture;
    if (pc && host !== 'silent') {
      const hz = hostAverage(sess.truthAt, pc.startSeconds, pc.endSeconds);
      s = apply(
        s,
        {
          type: 'capture-result',
          ...pc,
          result:
            host === 'ok' && hz !== null
              ? { kind: 'ok', hz, uncertaintyCents: 0.002 }
              : { kind: 'unavailable' },
        },
        o.check,
      );
    }
  });
  return s;
}

/** Counts 'captured' notes per step over a drive (the log keeps only the latest 50, so collect live). */
function countCaptures(states: RunState[]): Map<number, number> {
  const m = new Map<number, number>();
  for (const s of states)
    for (const n of s.notes) if (n.kind === 'captured') m.set(n.stepIndex, (m.get(n.stepIndex) ?? 0) + 1);
  return m;
}

function driveCollect(
  s: RunState,
  sess: Session,
  o: DriveOptions = {},
): { s: RunState; captures: Map<number, number>; all: RunState[] } {
  const all: RunState[] = [];
  const host = o.host ?? 'ok';
  let cur = s;
  sess.readings.forEach((r, k) => {
    for (const e of o.at?.[k] ?? []) {
      cur = apply(cur, e, o.check);
      all.push(cur);
    }
    cur = apply(cur, { type: 'reading', reading: r }, o.check);
    all.push(cur);
    o.each?.(cur, r);
    const pc = cur.pendingCapture;
    if (pc && host !== 'silent') {
      const hz = hostAverage(sess.truthAt, pc.startSeconds, pc.endSeconds);
      cur = apply(
        cur,
        {
          type: 'capture-result',
          ...pc,
          result:
            host === 'ok' && hz !== null
              ? { kind: 'ok', hz, uncertaintyCents: 0.002 }
              : { kind: 'unavailable' },
        },
        o.check,
      );
      all.push(cur);
    }
  });
  return { s: cur, captures: countCaptures(all), all };
}

const holds = (volts: number[], seconds: number, extra: Partial<Act> = {}): Act[] =>
  volts.map((v) => ({ v, seconds, ...extra }));

// ---------------------------------------------------------------------------------------------------

describe('createRun', () => {
  it('starts waiting for step 0 of the plan', () => {
    const s = createRun(presetPlan('octaves-0-7'));
    expect(s.phase).toBe('apply-voltage');
    expect(s.current).toBe(0);
    expect(s.steps.map((x) => x.nominalVolts)).toEqual([0, 1, 2, 3, 4, 5, 6, 7]);
    expect(s.pendingCapture).toBeNull();
    expect(s.options).toMatchObject(DEFAULT_RUN_OPTIONS);
    expect(deserializeRun(serializeRun(s))).toEqual(s);
  });
  it.each([
    [[1], {}, 'plan: the plan has 1 point; at least 2 are needed'],
    [[0, 0], {}, 'plan: point 2 (0 V) repeats point 1 (0 V)'],
    [[0, 1], { captureSeconds: 0 }, 'captureSeconds must be a finite number in [0.05, 60], got 0'],
    [[0, 1], { toleranceCents: 2000 }, 'toleranceCents must be a finite number in [1, 1200], got 2000'],
    [[0, 1], { plateau: { settleSeconds: -1 } }, 'settleSeconds must be a finite number in (0, 60], got -1'],
  ])('refuses plan %j with %o', (volts, opts, message) => {
    expect(() => createRun(volts, opts)).toThrow(new RangeError(message));
  });
});

describe('hands-free run over 0 to 7 V', () => {
  const volts = [0, 1, 2, 3, 4, 5, 6, 7];
  const sess = session(holds(volts, 3));
  const phases: string[] = [];
  const { s, captures } = driveCollect(createRun(presetPlan('octaves-0-7')), sess, {
    check: true,
    each: (st) => {
      if (phases[phases.length - 1] !== st.phase) phases.push(st.phase);
    },
  });

  it('finishes with every step captured exactly once', () => {
    expect(s.phase).toBe('finished');
    expect([...captures.entries()].sort((a, b) => a[0] - b[0])).toEqual(volts.map((_, i) => [i, 1]));
    expect(s.steps.every((st) => st.status === 'captured' && st.earlier.length === 0)).toBe(true);
  });

  it.each(volts.map((v, i) => [i, v]))(
    'step %d (%d V) has the host pitch, within 0.005 cent of the truth',
    (i, v) => {
      const c = s.steps[i].capture as StepCapture;
      expect(Math.abs(cents(c.hz, unitHz(v)))).toBeLessThan(0.005);
      expect(c.source).toBe('host');
      expect(c.how).toBe(i === 0 ? 'first' : 'expected');
      // Captured after settling (0.5 s) and for the capture window (1 s) inside this step's hold.
      expect(c.startSeconds).toBeGreaterThanOrEqual(sess.starts[i] + (i === 0 ? 0 : 0.2) + 0.5 - 1e-9);
      expect(c.endSeconds - c.startSeconds).toBeCloseTo(1, 12);
      expect(c.endSeconds).toBeLessThanOrEqual(sess.starts[i] + 3);
      expect(c.liveCount).toBeGreaterThanOrEqual(20);
    },
  );

  it('goes through the phases in order', () => {
    const cycle = ['apply-voltage', 'settling', 'capturing', 'measuring', 'captured'];
    expect(phases).toEqual([...volts.flatMap(() => cycle), 'finished']);
  });

  it('estimates the scale from the captured steps', () => {
    // Least squares of log2(f) on volts over exact data gives the unit's 0.998 oct/V back.
    expect(estimateOctavesPerVolt(s)).toEqual({ octavesPerVolt: expect.closeTo(OPV, 6), fromSteps: 8 });
    expect(runCaptures(s).map((p) => p.volts)).toEqual(volts);
  });
});

describe('a rough hand and a warm junction', () => {
  // Each step overshoots by +80 cents for 0.3 s (shorter than the 0.5 s settle time), then creeps down
  // from +3 cents with τ = 0.8 s (docs/facts.md: the pitch creeps after a step as the junction settles).
  const volts = [0, 1, 2, 3, 4];
  const sess = session(
    holds(volts, 4.5, { overshootCents: 80, overshootSeconds: 0.3, creepCents: 3, tauSeconds: 0.8 }),
    {
      seed: 4,
    },
  );
  // The user holds each voltage only 4.5 s, moving on whatever the screen says, so the run must not wait
  // for the creep to die out (settle timeout 0): it captures when the window completes and flags it.
  const { s, captures } = driveCollect(
    createRun(presetPlan('octaves-0-4'), { settleTimeoutSeconds: 0 }),
    sess,
  );
  it('captures each step once, after the overshoot, close to the settled pitch', () => {
    expect(s.phase).toBe('finished');
    expect([...captures.values()]).toEqual([1, 1, 1, 1, 1]);
    for (const [i, v] of volts.entries()) {
      const c = s.steps[i].capture as StepCapture;
      expect(c.startSeconds).toBeGreaterThan(sess.starts[i] + 0.2 + 0.3);
      // What is left of the tail during the window stays under 0.3 cent; a window still inside the creep
      // says so, and counts the creep in its uncertainty.
      const off = cents(c.hz, unitHz(v));
      expect(Math.abs(off)).toBeLessThan(0.3);
      if (Math.abs(off) > 0.02) expect(c.flags).toContain('still-settling');
      expect(Math.abs(off)).toBeLessThan(2 * c.uncertaintyCents);
    }
    expect(s.log.some((n) => n.kind === 'unexpected-pitch')).toBe(false);
  });
});

describe('a wrong voltage', () => {
  // At step 2 the user applies 2.5 V, then corrects it to 2 V.
  const acts: Act[] = [
    { v: 0, seconds: 3 },
    { v: 1, seconds: 3 },
    { v: 2.5, seconds: 3 },
    { v: 2, seconds: 3 },
    { v: 3, seconds: 3 },
  ];
  const sess = session(acts);
  const warnings: RunState[] = [];
  const { s, captures } = driveCollect(createRun([0, 1, 2, 3]), sess, {
    each: (st) => {
      if (st.warning) warnings.push(st);
    },
  });
  it('is flagged, not taken, and the corrected voltage is', () => {
    expect(warnings.length).toBeGreaterThan(0);
    const w = warnings[0].warning!;
    expect(warnings[0].phase).toBe('confirm-pitch');
    expect(w.stepIndex).toBe(2);
    expect(w.likely).toBe('wrong-voltage');
    // Expected from steps 0 and 1: fitted slope 0.998 oct/V, so exactly the unit's pitch at 2 V.
    expect(cents(w.expectedHz, unitHz(2))).toBeCloseTo(0, 3);
    expect(Math.abs(cents(w.heardHz, unitHz(2.5)))).toBeLessThan(0.05);
    expect(w.offCents).toBeCloseTo(0.5 * OPV * 1200, 0);
    expect([...captures.entries()].sort()).toEqual([
      [0, 1],
      [1, 1],
      [2, 1],
      [3, 1],
    ]);
    expect(Math.abs(cents(s.steps[2].capture!.hz, unitHz(2)))).toBeLessThan(0.005);
    expect(s.phase).toBe('finished');
  });
});

describe('a missed step', () => {
  // At step 2 the user jumps to 3 V: it matches the step after next.
  const sess = session([
    { v: 0, seconds: 3 },
    { v: 1, seconds: 3 },
    { v: 3, seconds: 4 },
  ]);
  it('is flagged as likely missed-step; the user may accept it anyway', () => {
    let s = createRun([0, 1, 2, 3]);
    let flaggedAt = -1;
    sess.readings.forEach((r, k) => {
      s = apply(s, { type: 'reading', reading: r });
      if (s.pendingCapture) {
        const hz = hostAverage(sess.truthAt, s.pendingCapture.startSeconds, s.pendingCapture.endSeconds)!;
        s = apply(s, {
          type: 'capture-result',
          ...s.pendingCapture,
          result: { kind: 'ok', hz, uncertaintyCents: 0.002 },
        });
      }
      if (s.warning && flaggedAt < 0) {
        flaggedAt = k;
        expect(s.warning.likely).toBe('missed-step');
        expect(s.warning.stepIndex).toBe(2);
        s = apply(s, { type: 'accept-pitch' }, true);
        expect(s.phase).toBe('capturing');
      }
    });
    expect(flaggedAt).toBeGreaterThan(0);
    const c = s.steps[2].capture!;
    expect(c.how).toBe('accepted-anyway');
    expect(Math.abs(cents(c.hz, unitHz(3)))).toBeLessThan(0.005);
    expect(s.current).toBe(3);
  });
  it('or redo the step, which clears the warning and waits', () => {
    let s = createRun([0, 1, 2, 3]);
    for (const r of sess.readings) {
      s = apply(s, { type: 'reading', reading: r });
      if (s.pendingCapture)
        s = apply(s, { type: 'capture-result', ...s.pendingCapture, result: { kind: 'unavailable' } });
      if (s.warning) break;
    }
    s = apply(s, { type: 'redo', stepIndex: 2 }, true);
    expect(s.warning).toBeNull();
    expect(s.phase).toBe('apply-voltage');
    expect(s.current).toBe(2);
    expect(s.steps[1].status).toBe('captured');
  });
});

describe('the pitch of the previous step', () => {
  it('is ignored when it settles again (the user has not moved the voltage yet)', () => {
    // After step 1 the signal drops out for a second and returns at the same voltage.
    const sess = session([
      { v: 0, seconds: 3 },
      { v: 1, seconds: 3 },
      { v: null, seconds: 1 },
      { v: 1, seconds: 3 },
      { v: 2, seconds: 3 },
    ]);
    const { s, captures, all } = driveCollect(createRun([0, 1, 2]), sess, { check: true });
    expect([...captures.values()]).toEqual([1, 1, 1]);
    expect(all.some((st) => st.notes.some((n) => n.kind === 'same-pitch-ignored' && n.stepIndex === 2))).toBe(
      true,
    );
    expect(s.phase).toBe('finished');
  });
});

describe('silence during a capture', () => {
  it('abandons the window and captures once the signal is back', () => {
    const sess = session([
      { v: 0, seconds: 3 },
      { v: 1, seconds: 1.2 },
      { v: null, seconds: 0.6 },
      { v: 1, seconds: 3 },
    ]);
    const { s, captures, all } = driveCollect(createRun([0, 1]), sess);
    expect(
      all.some((st) => st.notes.some((n) => n.kind === 'capture-abandoned' && n.reason === 'signal-lost')),
    ).toBe(true);
    expect([...captures.values()]).toEqual([1, 1]);
    expect(s.steps[1].capture!.startSeconds).toBeGreaterThan(sess.starts[3]);
  });
});

describe('when the host cannot measure', () => {
  const sess = session(holds([0, 1], 3), { sigma: 0.2, seed: 9 });
  it('uses the mean of the live readings and their standard error, and marks it', () => {
    const s = drive(createRun([0, 1]), sess, { host: 'unavailable' });
    for (const st of s.steps) {
      const c = st.capture!;
      expect(c.source).toBe('live-mean');
      const inWindow = sess.readings.filter(
        (r): r is Extract<PitchReading, { kind: 'ok' }> =>
          r.kind === 'ok' && r.timeSeconds >= c.startSeconds && r.timeSeconds <= c.endSeconds + 1e-9,
      );
      expect(c.liveCount).toBe(inWindow.length);
      // Outside reference: simple-statistics mean and sample standard deviation; the standard error of the
      // mean is s/√n (JCGM 100:2008, GUM §4.2.3).
      const ref = inWindow[0].hz;
      const c0 = inWindow.map((r) => cents(r.hz, ref));
      expect(cents(c.hz, ref)).toBeCloseTo(mean(c0), 9);
      expect(c.components.estimatorCents).toBeCloseTo(sampleStandardDeviation(c0) / Math.sqrt(c0.length), 9);
      // The residual-creep term joins it as a root-sum-square (JCGM 100:2008, eq. 10).
      expect(c.uncertaintyCents).toBeCloseTo(
        Math.hypot(c.components.estimatorCents, c.components.repeatabilityCents, c.components.settlingCents),
        12,
      );
      expect(Math.abs(cents(c.hz, unitHz(st.nominalVolts)))).toBeLessThan(4 * c.uncertaintyCents);
    }
  });
  it('falls back the same way when the host never answers (timeout in reading time)', () => {
    const long = session(holds([0, 1], 13), { seed: 2 });
    const { s, all } = driveCollect(createRun([0, 1]), long, { host: 'silent' });
    expect(all.filter((st) => st.notes.some((n) => n.kind === 'host-timeout'))).toHaveLength(2);
    expect(s.steps.map((st) => st.capture?.source)).toEqual(['live-mean', 'live-mean']);
  });
  it('ignores a result for another window, and treats an unusable one as unavailable', () => {
    let s = createRun([0, 1]);
    for (const r of sess.readings) {
      s = apply(s, { type: 'reading', reading: r });
      if (s.pendingCapture) break;
    }
    const pc = s.pendingCapture!;
    const stale = apply(s, {
      type: 'capture-result',
      ...pc,
      startSeconds: pc.startSeconds - 1,
      result: { kind: 'unavailable' },
    });
    expect(stale.notes).toEqual([
      { kind: 'ignored', event: 'capture-result', reason: 'stale-capture-result', atSeconds: s.lastSeconds },
    ]);
    expect(stale.pendingCapture).toEqual(pc);
    const bad = apply(s, {
      type: 'capture-result',
      ...pc,
      result: { kind: 'ok', hz: Number.NaN, uncertaintyCents: 0 },
    });
    expect(bad.notes[0]).toMatchObject({ kind: 'host-result-unusable', stepIndex: 0 });
    expect(bad.steps[0].capture!.source).toBe('live-mean');
  });
});

describe('pause, resume, abort', () => {
  const sess = session(holds([0, 1, 2], 4));
  it('pausing mid-capture abandons the window; readings while paused are ignored; resume captures again', () => {
    let s = createRun([0, 1, 2]);
    let k = 0;
    for (; k < sess.readings.length && s.phase !== 'capturing'; k++)
      s = apply(s, { type: 'reading', reading: sess.readings[k] });
    s = apply(s, { type: 'pause' }, true);
    expect(s.phase).toBe('paused');
    expect(s.capture).toBeNull();
    expect(s.notes[0]).toMatchObject({ kind: 'capture-abandoned', reason: 'paused', stepIndex: 0 });
    const pausedDetector = JSON.stringify(s.detector);
    for (let j = 0; j < 10; j++, k++) s = apply(s, { type: 'reading', reading: sess.readings[k] });
    expect(JSON.stringify(s.detector)).toBe(pausedDetector);
    expect(apply(s, { type: 'pause' }).notes[0]).toMatchObject({ kind: 'ignored', reason: 'paused' });
    s = apply(s, { type: 'resume' }, true);
    expect(s.phase).toBe('apply-voltage');
    const rest = { ...sess, readings: sess.readings.slice(k) };
    const out = driveCollect(s, rest);
    expect([...out.captures.values()]).toEqual([1, 1, 1]);
    expect(out.s.phase).toBe('finished');
  });
  it('abort keeps every capture and ends the run', () => {
    let s = drive(createRun([0, 1, 2]), { ...sess, readings: sess.readings.slice(0, 140) });
    expect(s.steps[0].capture).not.toBeNull();
    const kept = JSON.stringify(s.steps);
    s = apply(s, { type: 'abort' }, true);
    expect(s.phase).toBe('aborted');
    expect(JSON.stringify(s.steps)).toBe(kept);
    for (const e of [
      { type: 'resume' },
      { type: 'skip' },
      { type: 'capture-now' },
      { type: 'abort' },
    ] as RunEvent[]) {
      expect(apply(s, e).notes[0]).toMatchObject({ kind: 'ignored', reason: 'run-over' });
    }
    s = drive(s, { ...sess, readings: sess.readings.slice(140) });
    expect(JSON.stringify(s.steps)).toBe(kept);
  });
});

describe('navigation', () => {
  it('redo clears that step only and measures it again', () => {
    let s = drive(createRun([0, 1, 2]), session(holds([0, 1, 2], 3)));
    expect(s.phase).toBe('finished');
    s = apply(s, { type: 'redo', stepIndex: 1 }, true);
    expect(s.phase).toBe('apply-voltage'); // the oscillator still sits at 2 V: nothing is taken
    expect(s.current).toBe(1);
    expect(s.steps[1]).toMatchObject({ status: 'pending', capture: null });
    expect(s.steps[0].capture).not.toBeNull();
    expect(s.steps[2].capture).not.toBeNull();
    s = drive(
      s,
      session(
        [
          { v: 2, seconds: 1 },
          { v: 1, seconds: 3 },
        ],
        { t0: 9, seed: 5 },
      ),
    );
    expect(s.phase).toBe('finished');
    expect(Math.abs(cents(s.steps[1].capture!.hz, unitHz(1)))).toBeLessThan(0.005);
  });

  it('back re-measures the previous step, keeping the old capture in `earlier`', () => {
    const sess = session([
      { v: 0, seconds: 3 },
      { v: 1, seconds: 6 },
    ]);
    let s = createRun([0, 1, 2]);
    let k = 0;
    for (; s.current !== 2; k++) {
      s = apply(s, { type: 'reading', reading: sess.readings[k] });
      if (s.pendingCapture) {
        const hz = hostAverage(sess.truthAt, s.pendingCapture.startSeconds, s.pendingCapture.endSeconds)!;
        s = apply(s, {
          type: 'capture-result',
          ...s.pendingCapture,
          result: { kind: 'ok', hz, uncertaintyCents: 0.002 },
        });
      }
    }
    const first = s.steps[1].capture!;
    s = apply(s, { type: 'back' }, true);
    // Still at 1 V, where step 1 is expected: the capture starts at once.
    expect(s.current).toBe(1);
    expect(s.phase).toBe('capturing');
    s = drive(s, { ...sess, readings: sess.readings.slice(k) });
    expect(s.steps[1].earlier).toEqual([first]);
    expect(s.steps[1].capture).not.toEqual(first);
    expect(s.current).toBe(2);
  });

  it('back at the first step and redo of a step that does not exist are ignored', () => {
    const s = createRun([0, 1]);
    expect(apply(s, { type: 'back' }).notes[0]).toMatchObject({ kind: 'ignored', reason: 'no-step-before' });
    expect(apply(s, { type: 'redo', stepIndex: 2 }).notes[0]).toMatchObject({ reason: 'bad-step-index' });
    expect(apply(s, { type: 'redo', stepIndex: 0.5 }).notes[0]).toMatchObject({ reason: 'bad-step-index' });
  });

  it('skip leaves a step out; the next is expected from the nearest captured step', () => {
    const sess = session([
      { v: 0, seconds: 3 },
      { v: 2, seconds: 3 },
    ]);
    const { s } = driveCollect(createRun([0, 1, 2]), sess, { at: { 62: [{ type: 'skip' }] } });
    expect(s.steps.map((st) => st.status)).toEqual(['captured', 'skipped', 'captured']);
    expect(s.phase).toBe('finished');
    expect(s.log.find((n) => n.kind === 'finished')).toMatchObject({ captured: 2, skipped: 1 });
    expect(s.steps[2].capture!.how).toBe('expected');
  });
});

describe('measured volts', () => {
  it('move the expected pitch: 10 mV is 12 cents at 1 V/oct', () => {
    // docs/facts.md: at 1 V/oct 1 mV is 1.2 cents.
    let s = drive(createRun([0, 1, 2]), session(holds([0], 3)));
    const before = expectedPitch(s, 1)!;
    s = apply(s, { type: 'set-measured-volts', stepIndex: 1, volts: 1.01 }, true);
    const after = expectedPitch(s, 1)!;
    expect(cents(after.expectedHz, before.expectedHz)).toBeCloseTo(12, 9);
    expect(after.toleranceCents).toBe(150);
    expect(apply(s, { type: 'set-measured-volts', stepIndex: 1, volts: 99 }).notes[0]).toMatchObject({
      reason: 'bad-volts',
    });
    expect(
      apply(s, { type: 'set-measured-volts', stepIndex: 1, volts: null }).steps[1].measuredVolts,
    ).toBeNull();
  });
});

describe('manual capture', () => {
  it('capture-now takes a window of whatever is playing, even while the pitch moves', () => {
    const sess = session([
      { v: 0, seconds: 0.3 },
      { v: 2, seconds: 3, glideSeconds: 2 },
    ]);
    let s = createRun([0, 1]);
    expect(apply(s, { type: 'capture-now' }).notes[0]).toMatchObject({ reason: 'no-readings-yet' });
    s = drive(s, { ...sess, readings: sess.readings.slice(0, 8) }, { at: { 7: [{ type: 'capture-now' }] } });
    expect(s.phase).toBe('capturing');
    expect(s.capture!.how).toBe('manual');
    expect(apply(s, { type: 'capture-now' }).notes[0]).toMatchObject({ reason: 'already-capturing' });
    s = drive(s, { ...sess, readings: sess.readings.slice(8, 40) }, { host: 'unavailable' });
    expect(s.steps[0].capture).toMatchObject({ how: 'manual', source: 'live-mean' });
  });
});

describe('the acceptance window narrows after three steps', () => {
  // Issue 9: once three steps are captured, a 30 mV slip (36 cents at 1 V/oct, docs/facts.md: 1 mV is 1.2 cents)
  // must be caught before capture, where the old 150-cent window let up to about 125 mV through.
  for (const mv of [30, 50, 120]) {
    it(`catches a ${mv} mV slip at the fifth step, then takes the corrected voltage`, () => {
      const acts: Act[] = [
        { v: 0, seconds: 3 },
        { v: 1, seconds: 3 },
        { v: 2, seconds: 3 },
        { v: 3, seconds: 3 },
        { v: 4 + mv / 1000, seconds: 3 },
        { v: 4, seconds: 3 },
      ];
      const sess = session(acts, { seed: 11 });
      const warnings: RunState[] = [];
      const { s, captures } = driveCollect(createRun([0, 1, 2, 3, 4]), sess, {
        each: (st) => {
          if (st.warning) warnings.push(st);
        },
      });
      expect(warnings.length).toBeGreaterThan(0);
      expect(warnings[0].warning!.stepIndex).toBe(4);
      expect(warnings[0].warning!.likely).toBe('wrong-voltage');
      expect(captures.get(4)).toBe(1);
      expect(Math.abs(cents(s.steps[4].capture!.hz, unitHz(4)))).toBeLessThan(0.05);
    });
  }
  it('takes clean steps with thermal tails and noisy readings without a warning', () => {
    const volts = [0, 1, 2, 3, 4, 5];
    // Held 6 s: the run now waits for the creep to die out before it captures (dsp/calibration/run.ts settle on the slope).
    const sess = session(holds(volts, 6, { creepCents: 2, tauSeconds: 0.5 }), { seed: 5, sigma: 0.2 });
    const { s } = driveCollect(createRun(volts), sess);
    expect(s.phase).toBe('finished');
    expect(s.log.some((n) => n.kind === 'unexpected-pitch')).toBe(false);
  });
});

describe('settling on the slope', () => {
  // A thermal tail of 1.5 cents per step with τ = 1.5 s (docs/facts.md: the pitch creeps after a step as
  // the junction settles); the user holds each voltage 12 s, long enough for the creep to die out.
  const volts = [0, 1, 2];
  const sess = session(holds(volts, 12, { creepCents: 1.5, tauSeconds: 1.5 }), { seed: 7, sigma: 0.005 });
  it('waits until the creep cannot move the result, then captures within 0.02 cent, unflagged', () => {
    const { s } = driveCollect(createRun(volts, { settleTimeoutSeconds: 8 }), sess);
    expect(s.phase).toBe('finished');
    for (const [i, v] of volts.entries()) {
      const c = s.steps[i].capture as StepCapture;
      const off = cents(c.hz, unitHz(v));
      // Target of the issue: within 0.02 cent of the settled value, or flagged.
      expect(Math.abs(off), `step ${i}: ${off} cent`).toBeLessThan(0.02);
      expect(c.flags).toEqual([]);
      expect(c.components.settlingCents).toBeGreaterThan(0);
      expect(Math.abs(off)).toBeLessThan(2 * c.uncertaintyCents);
    }
  });
  it('without waiting the same tail leaves the capture off by more, and says so', () => {
    const { s } = driveCollect(createRun(volts, { settleTimeoutSeconds: 0, settleLimitCents: 0.0001 }), sess);
    const c = s.steps[1].capture as StepCapture;
    expect(Math.abs(cents(c.hz, unitHz(1)))).toBeGreaterThan(0.02);
    expect(c.flags).toContain('still-settling');
    expect(Math.abs(cents(c.hz, unitHz(1)))).toBeLessThan(2 * c.uncertaintyCents);
  });
  it('loads a saved run from before flags and components, with defaults', () => {
    const { s } = driveCollect(createRun(volts), sess);
    const old = JSON.parse(serializeRun(s));
    delete old.options.settleLimitCents;
    delete old.options.creepHorizonSeconds;
    delete old.options.settleTimeoutSeconds;
    for (const st of old.steps) {
      delete st.capture.flags;
      delete st.capture.components;
    }
    const back = deserializeRun(JSON.stringify(old));
    expect(back.steps[0].capture?.flags).toEqual([]);
    expect(back.steps[0].capture?.components).toEqual({
      estimatorCents: back.steps[0].capture?.uncertaintyCents,
      repeatabilityCents: 0,
      settlingCents: 0,
      dof: Infinity,
    });
    expect(back.options.settleTimeoutSeconds).toBe(4);
  });
});

describe('semitone plan', () => {
  it('captures all 13 points 100 cents apart, with a tolerance of at most half a semitone', () => {
    // Semitone = 1/12 V = 83.333 mV at 1 V/oct (docs/facts.md).
    const plan = presetPlan('semitones-0-1');
    const { s, captures } = driveCollect(createRun(plan), session(holds([...plan.volts], 2.5)));
    expect(s.phase).toBe('finished');
    expect([...captures.values()]).toEqual(new Array(13).fill(1));
    const e = expectedPitch(s, 5)!;
    // With every other step captured the window has narrowed to a few prediction-σ plus a few cents.
    expect(e.toleranceCents).toBeLessThan(50 * OPV);
    expect(e.toleranceCents).toBeGreaterThanOrEqual(WINDOW_MARGIN_CENTS);
  });
});

describe('invalid events never throw', () => {
  const s0 = createRun([0, 1]);
  it.each([
    [{ type: 'resume' }, 'not-paused'],
    [{ type: 'accept-pitch' }, 'no-warning'],
    [
      {
        type: 'capture-result',
        stepIndex: 0,
        startSeconds: 0,
        endSeconds: 1,
        result: { kind: 'unavailable' },
      },
      'no-pending-capture',
    ],
    [{ type: 'dance' }, 'bad-event'],
    [{ type: 'reading', reading: { kind: 'ok', hz: 'loud', timeSeconds: 1 } }, 'bad-reading'],
    [{ type: 'reading', reading: null }, 'bad-reading'],
    [{ type: 'set-measured-volts', stepIndex: -1, volts: 1 }, 'bad-step-index'],
  ])('%o → ignored: %s', (event, reason) => {
    const s = runReducer(s0, event as RunEvent);
    expect(s.notes).toEqual([{ kind: 'ignored', event: event.type, reason, atSeconds: null }]);
    expect({ ...s, notes: [], log: [] }).toEqual(s0);
  });
  it('non-objects are ignored too', () => {
    expect(runReducer(s0, null as unknown as RunEvent).notes[0]).toMatchObject({ reason: 'bad-event' });
    expect(runReducer(s0, 42 as unknown as RunEvent).notes[0]).toMatchObject({ reason: 'bad-event' });
  });
  it('out-of-order readings are ignored', () => {
    const r = session(holds([0], 1)).readings;
    const s = apply(apply(s0, { type: 'reading', reading: r[5] }), { type: 'reading', reading: r[4] });
    expect(s.notes[0]).toMatchObject({ reason: 'out-of-order-reading' });
  });
});

describe('deserializeRun', () => {
  const good = serializeRun(createRun([0, 1, 2]));
  it.each([
    ['not JSON', '{oops', 'saved run is not JSON'],
    ['another format', JSON.stringify({ format: 'other' }), 'saved run is not valid: format:'],
    ['a NaN written as null', good.replace('"progress":0', '"progress":null'), 'progress:'],
    [
      'a captured step without its capture',
      good.replace('"status":"pending"', '"status":"captured"'),
      'steps.0: status captured does not agree with capture null',
    ],
    [
      'a cursor off the plan',
      good.replace('"current":0', '"current":7'),
      'current: 7 is not a step index in [0, 2]',
    ],
  ])('refuses %s with a RunStateError', (_name, text, fragment) => {
    let caught: unknown = null;
    try {
      deserializeRun(text);
    } catch (err) {
      caught = err;
    }
    expect(caught).toBeInstanceOf(RunStateError);
    expect((caught as RunStateError).message).toContain(fragment);
    expect((caught as RunStateError).issues.length).toBeGreaterThan(0);
  });
  it('validateRunState reports without throwing', () => {
    expect(validateRunState(null).kind).toBe('error');
    expect(validateRunState(JSON.parse(good))).toEqual({ kind: 'ok', state: JSON.parse(good) });
  });
});

// ---------------------------------------------------------------------------------------------------
// Model-based test: random sessions and random user actions. Checks, after every event: the state is a
// valid run, it survives JSON and behaves the same after it, the input is never mutated, no capture is
// ever lost except by a redo of that step, and the reducer never fails internally.

type Cmd =
  | {
      kind: 'hold';
      /** `current`: the voltage the run asks for (a cooperative user); a number: that plan voltage; null: silence. */
      v: 'current' | number | null;
      wrong: number;
      seconds: number;
      answer: 'ok' | 'unavailable' | 'none';
    }
  | { kind: 'event'; event: RunEvent };

const PLAN = [0, 1, 2, 3];

const cmdArb: fc.Arbitrary<Cmd> = fc.oneof(
  {
    weight: 5,
    arbitrary: fc.record({
      kind: fc.constant('hold' as const),
      v: fc.oneof(
        { weight: 14, arbitrary: fc.constant('current' as const) },
        { weight: 4, arbitrary: fc.constantFrom(...PLAN) },
        { weight: 1, arbitrary: fc.constant(null) },
      ),
      wrong: fc.constantFrom(0, 0, 0, 0, 0, 0, 0, 0.5),
      seconds: fc.double({ min: 0.1, max: 5, noNaN: true }),
      answer: fc.constantFrom('ok' as const, 'ok' as const, 'unavailable' as const, 'none' as const),
    }),
  },
  {
    weight: 2,
    arbitrary: fc
      .oneof(
        { weight: 1, arbitrary: fc.constant<RunEvent>({ type: 'abort' }) },
        {
          weight: 20,
          arbitrary: fc.constantFrom<RunEvent>(
            { type: 'skip' },
            { type: 'back' },
            { type: 'pause' },
            { type: 'resume' },
            { type: 'resume' },
            { type: 'capture-now' },
            { type: 'accept-pitch' },
          ),
        },
        {
          weight: 5,
          arbitrary: fc.integer({ min: -1, max: 4 }).map((i): RunEvent => ({ type: 'redo', stepIndex: i })),
        },
        {
          weight: 3,
          arbitrary: fc
            .tuple(fc.integer({ min: 0, max: 3 }), fc.option(fc.double({ min: -1, max: 4, noNaN: true })))
            .map(([i, v]): RunEvent => ({ type: 'set-measured-volts', stepIndex: i, volts: v })),
        },
      )
      .map((event) => ({ kind: 'event' as const, event })),
  },
);

function allCaptures(s: RunState, j: number): string[] {
  const st = s.steps[j];
  return [...(st.capture ? [st.capture] : []), ...st.earlier].map((c) => JSON.stringify(c));
}

function checkedStep(s: RunState, e: RunEvent): RunState {
  const before = serializeRun(s);
  const next = runReducer(s, e);
  expect(serializeRun(s)).toBe(before);
  const rt = validateRunState(JSON.parse(serializeRun(next)));
  expect(rt.kind).toBe('ok');
  if (rt.kind === 'ok') expect(rt.state).toEqual(next);
  expect(runReducer(JSON.parse(before) as RunState, e)).toEqual(next);
  expect(next.notes.some((n) => n.kind === 'ignored' && n.reason === 'internal-error')).toBe(false);
  expect(next.progress).toBeGreaterThanOrEqual(0);
  expect(next.progress).toBeLessThanOrEqual(1);
  expect(next.pendingCapture !== null).toBe(next.phase === 'measuring');
  for (let j = 0; j < s.steps.length; j++) {
    if (e.type === 'redo' && e.stepIndex === j) continue;
    const after = new Set(allCaptures(next, j));
    for (const c of allCaptures(s, j)) expect(after.has(c)).toBe(true);
  }
  return next;
}

describe('model-based: random sessions and actions', () => {
  it('never reaches a bad state and never loses a capture', () => {
    let captured = 0;
    fc.assert(
      fc.property(
        fc.array(cmdArb, { minLength: 1, maxLength: 40, size: 'max' }),
        fc.integer({ min: 1, max: 1000 }),
        (cmds, seed) => {
          let s = createRun(PLAN, { hostTimeoutSeconds: 2 });
          let t = 0;
          const noise = gaussianNoise(4096, 1, seed);
          let k = 0;
          let lastHz: number | null = null;
          for (const c of cmds) {
            if (c.kind === 'event') {
              s = checkedStep(s, c.event);
              continue;
            }
            const n = Math.max(1, Math.round(c.seconds * RATE));
            const v = c.v === 'current' ? PLAN[s.current] : c.v;
            const target = v === null ? null : unitHz(v + c.wrong);
            for (let i = 0; i < n; i++) {
              t += 1 / RATE;
              // A two-reading glide from the last pitch, then the hold.
              const f =
                target === null
                  ? null
                  : lastHz !== null && i < 2
                    ? lastHz * Math.pow(target / lastHz, (i + 1) / 3)
                    : target;
              const reading: PitchReading =
                f === null
                  ? noReading(t)
                  : okReading(f * Math.pow(2, (0.02 * noise[k++ % noise.length]) / 1200), t);
              s = checkedStep(s, { type: 'reading', reading });
              captured += s.notes.filter((x) => x.kind === 'captured').length;
              const pc = s.pendingCapture;
              if (pc && c.answer !== 'none') {
                const result =
                  c.answer === 'ok' && f !== null
                    ? { kind: 'ok' as const, hz: f, uncertaintyCents: 0.002 }
                    : { kind: 'unavailable' as const };
                s = checkedStep(s, { type: 'capture-result', ...pc, result });
                captured += s.notes.filter((x) => x.kind === 'captured').length;
              }
            }
            lastHz = target;
          }
        },
      ),
      { numRuns: Number(process.env.SPANMETER_MODEL_RUNS ?? 40) }, // raise for a longer search
    );
    // The random users do get work done: the property is not vacuous.
    expect(captured).toBeGreaterThan(20);
  }, 180_000);
});
