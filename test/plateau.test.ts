import { describe, expect, it } from 'vitest';
import { mean, median, sampleStandardDeviation } from 'simple-statistics';
import {
  DEFAULT_PLATEAU_OPTIONS,
  createPlateauDetector,
  createPlateauState,
  findPlateaus,
  pushReading,
  resolvePlateauOptions,
  type Plateau,
} from '../dsp/calibration/index.ts';
import type { PitchReading } from '../dsp/pitch/index.ts';
import { READING_LEVEL, readingStream, segmentsTruth, type Segment } from './helpers/readings.ts';

// ---------------------------------------------------------------------------------------------------
// A reading-stream simulator: segments of pitch over time, sampled at the pitch engine's ~20 readings/s.
// Demo scenario (invented): a bench oscillator on the repair desk, about 65.2 Hz at 0 V.

type Seg = Segment;

interface Sim {
  readings: PitchReading[];
  /** True pitch at time t (null in silence). */
  truthAt: (t: number) => number | null;
  /** Start time of each segment. */
  starts: number[];
}

const LEVEL = READING_LEVEL;

/** The shared generator (test/helpers/readings.ts) over segments; seed 7 unless given. */
function simulate(segs: Seg[], opts: { rate?: number; sigma?: number; seed?: number } = {}): Sim {
  const { truthAt, starts, totalSeconds } = segmentsTruth(segs);
  const readings = readingStream(truthAt, totalSeconds, {
    rate: opts.rate,
    sigmaCents: opts.sigma,
    seed: opts.seed,
  });
  return { readings, truthAt, starts };
}

const cents = (hz: number, ref: number) => 1200 * Math.log2(hz / ref);
// 1 V/oct: one volt is one octave, 1200 cents (docs/facts.md). The scenario unit runs 0.998 oct/V.
const unitHz = (v: number) => 65.2 * Math.pow(2, 0.998 * v);

function steps(volts: number[], holdSeconds: number, glideSeconds = 0.3): Seg[] {
  const segs: Seg[] = [];
  volts.forEach((v, i) => {
    if (i > 0) segs.push({ kind: 'glide', seconds: glideSeconds, toHz: unitHz(v) });
    segs.push({ kind: 'hold', seconds: holdSeconds, hz: unitHz(v) });
  });
  return segs;
}

// ---------------------------------------------------------------------------------------------------

describe('options', () => {
  it('has the documented defaults', () => {
    expect(resolvePlateauOptions()).toEqual(DEFAULT_PLATEAU_OPTIONS);
    expect(DEFAULT_PLATEAU_OPTIONS).toMatchObject({
      settleSeconds: 0.5,
      sigmaMultiple: 3,
      maxHalfWidthCents: 0.3,
    });
  });
  it.each([
    [{ settleSeconds: 0 }, 'settleSeconds must be a finite number in (0, 60], got 0'],
    [{ sigmaMultiple: 0.5 }, 'sigmaMultiple must be a finite number in [1, 10], got 0.5'],
    [{ maxHalfWidthCents: -1 }, 'maxHalfWidthCents must be a finite number in (0, 100], got -1'],
    [{ minHalfWidthCents: 0.5 }, 'minHalfWidthCents must be a finite number in [0.001, 0.3], got 0.5'],
    [{ maxGapSeconds: Number.NaN }, 'maxGapSeconds must be a finite number in (0, 10], got NaN'],
    [{ minReadings: 2.5 }, 'minReadings must be an integer in [2, 1000], got 2.5'],
    [{ maxSettleSeconds: 0.2 }, 'maxSettleSeconds must be a finite number in [0.5, 120], got 0.2'],
  ])('refuses %o', (opts, message) => {
    expect(() => resolvePlateauOptions(opts)).toThrow(new RangeError(message));
    expect(() => findPlateaus([], opts)).toThrow(RangeError);
  });
});

describe('stepped 1 V/oct sequence', () => {
  const volts = [0, 1, 2, 3, 4, 5, 6, 7];
  const sim = simulate(steps(volts, 3), { sigma: 0.02, seed: 11 });
  const plateaus = findPlateaus(sim.readings);

  it('finds one plateau per step, none on the glides', () => {
    expect(plateaus).toHaveLength(volts.length);
  });

  it.each(volts.map((v, i) => [v, i]))('step %d V: pitch within 0.02 cent of the truth', (v, i) => {
    const p = plateaus[i];
    // Tolerance: reading noise 0.02 cent over ~50 readings gives a standard error near 0.003 cent.
    expect(Math.abs(cents(p.medianHz, unitHz(v)))).toBeLessThan(0.02);
    expect(Math.abs(cents(p.meanHz, unitHz(v)))).toBeLessThan(0.02);
    // Settled from the first reading after the glide, confirmed one settle time later.
    const holdStart = sim.starts[2 * i];
    expect(p.startSeconds).toBeGreaterThanOrEqual(holdStart - 1e-9);
    expect(p.startSeconds).toBeLessThan(holdStart + 0.1);
    expect(p.settledAtSeconds - p.startSeconds).toBeGreaterThanOrEqual(0.5 - 1e-9);
    expect(p.settledAtSeconds - p.startSeconds).toBeLessThan(0.56);
    expect(p.groupSize).toBe(1);
    // Band: k·σ = 3·0.02 = 0.06 cent, above the 0.05 floor and below the 0.3 cap.
    expect(p.halfWidthCents).toBeCloseTo(0.06, 12);
  });

  it('reports the statistics a reference library computes over the same readings', () => {
    // Outside reference: simple-statistics (npm) mean, median and sample standard deviation.
    for (const p of plateaus) {
      const inside = sim.readings.filter(
        (r): r is Extract<PitchReading, { kind: 'ok' }> =>
          r.kind === 'ok' && r.timeSeconds >= p.startSeconds - 1e-9 && r.timeSeconds <= p.endSeconds + 1e-9,
      );
      const ref = inside[0].hz;
      const c = inside.map((r) => cents(r.hz, ref));
      expect(p.count).toBe(inside.length);
      expect(cents(p.meanHz, ref)).toBeCloseTo(mean(c), 9);
      expect(cents(p.medianHz, ref)).toBeCloseTo(median(c), 9);
      expect(p.spreadCents).toBeCloseTo(sampleStandardDeviation(c), 9);
      expect(p.standardErrorCents).toBeCloseTo(sampleStandardDeviation(c) / Math.sqrt(c.length), 9);
    }
  });

  it('the live detector reports exactly what findPlateaus does', () => {
    const d = createPlateauDetector();
    const settled: Plateau[] = [];
    const ended: Plateau[] = [];
    for (const r of sim.readings) {
      const u = d.push(r);
      if (u.settled) settled.push(u.settled);
      if (u.ended) ended.push(u.ended);
    }
    const last = d.flush();
    if (last) ended.push(last);
    expect(ended).toEqual(plateaus);
    expect(settled.map((p) => p.startSeconds)).toEqual(plateaus.map((p) => p.startSeconds));
  });

  it('a JSON copy of the state carries on identically', () => {
    const o = resolvePlateauOptions();
    const a = createPlateauState();
    let b = createPlateauState();
    sim.readings.forEach((r, k) => {
      const ua = pushReading(a, r, o);
      const ub = pushReading(b, r, o);
      expect(ub).toEqual(ua);
      if (k % 7 === 0) b = JSON.parse(JSON.stringify(b));
    });
  });
});

describe.each([0.1, 0.2, 0.3, 0.45])('a hand overshooting the knob for %d s', (overshootSeconds) => {
  // Overshoot +60 cents, then the pitch falls to the target: the overshoot is never a plateau.
  const segs: Seg[] = [
    { kind: 'hold', seconds: 2, hz: unitHz(1) },
    { kind: 'glide', seconds: 0.1, toHz: unitHz(2) * Math.pow(2, 60 / 1200) },
    { kind: 'hold', seconds: overshootSeconds, hz: unitHz(2) * Math.pow(2, 60 / 1200) },
    { kind: 'glide', seconds: 0.1, toHz: unitHz(2) },
    { kind: 'hold', seconds: 2, hz: unitHz(2) },
  ];
  it('finds the two true plateaus only', () => {
    const ps = findPlateaus(simulate(segs, { seed: 3 }).readings);
    expect(ps).toHaveLength(2);
    expect(Math.abs(cents(ps[0].medianHz, unitHz(1)))).toBeLessThan(0.03);
    expect(Math.abs(cents(ps[1].medianHz, unitHz(2)))).toBeLessThan(0.03);
    // The second plateau settles from after the overshoot has passed.
    expect(ps[1].startSeconds).toBeGreaterThan(2 + 0.1 + overshootSeconds);
  });
});

it('an overshoot held longer than the settle time is a plateau of its own (control case)', () => {
  const segs: Seg[] = [
    { kind: 'hold', seconds: 2, hz: unitHz(1) },
    { kind: 'hold', seconds: 0.8, hz: unitHz(2) * Math.pow(2, 60 / 1200) },
    { kind: 'hold', seconds: 2, hz: unitHz(2) },
  ];
  expect(findPlateaus(simulate(segs, { seed: 3 }).readings)).toHaveLength(3);
});

describe('thermal tail after a step', () => {
  // Creep of +4 cents decaying with τ = 1 s (docs/facts.md: the pitch creeps after a voltage step).
  const segs: Seg[] = [
    { kind: 'hold', seconds: 2, hz: unitHz(3) },
    { kind: 'hold', seconds: 6, hz: unitHz(4), creepCents: 4, tauSeconds: 1 },
  ];
  const sim = simulate(segs, { sigma: 0.01, seed: 5 });
  const ps = findPlateaus(sim.readings);
  it('settles once the creep in the trailing window fits the band, and stays one plateau', () => {
    expect(ps).toHaveLength(2);
    const p = ps[1];
    // Band ±0.05 cent (the floor): creep over 0.5 s is 4·e^(−t)·(1 − e^(−0.5)) ≤ 0.1 cent from t ≈ 2.75 s.
    expect(p.startSeconds - 2).toBeGreaterThan(2.2);
    expect(p.startSeconds - 2).toBeLessThan(3.2);
    expect(p.endSeconds).toBeCloseTo(7.95, 9);
    // What is left of the tail when it settled: 4·e^(−2.75) ≈ 0.26 cent at most.
    expect(Math.abs(cents(p.medianHz, unitHz(4)))).toBeLessThan(0.3);
  });
});

describe('noisy readings (σ = 0.5 cent)', () => {
  const volts = [0, 1, 2];
  const sim = simulate(steps(volts, 8), { sigma: 0.5, seed: 21 });
  const ps = findPlateaus(sim.readings);
  it('still settles, averaging readings in groups so the band stays within ±0.3 cent', () => {
    expect(ps).toHaveLength(3);
    for (const [i, p] of ps.entries()) {
      // g = ⌈(3·0.5/0.3)²⌉ = 25 readings per group; at least 3 groups, so 75 readings (3.7 s) to settle.
      expect(p.groupSize).toBe(25);
      expect(p.halfWidthCents).toBeCloseTo(0.3, 12);
      expect(p.settledAtSeconds - p.startSeconds).toBeGreaterThanOrEqual(3.7 - 1e-9);
      // Standard error over ≥ 75 readings: about 0.5/√75 = 0.06 cent; allow 4 of them.
      expect(Math.abs(cents(p.meanHz, unitHz(volts[i])))).toBeLessThan(0.25);
    }
  });
});

describe('gaps in the readings', () => {
  it('a silence longer than maxGapSeconds splits a plateau', () => {
    const segs: Seg[] = [
      { kind: 'hold', seconds: 2, hz: 220 },
      { kind: 'silence', seconds: 1 },
      { kind: 'hold', seconds: 2, hz: 220 },
    ];
    const d = createPlateauDetector();
    let gaps = 0;
    for (const r of simulate(segs).readings) if (d.push(r).gap) gaps++;
    expect(gaps).toBe(1);
    expect(findPlateaus(simulate(segs).readings)).toHaveLength(2);
  });
  it('a single dropped reading does not', () => {
    const readings = simulate([{ kind: 'hold', seconds: 3, hz: 220 }]).readings.map((r, k) =>
      k === 30
        ? ({ kind: 'none', reason: 'no-pitch', level: LEVEL, timeSeconds: r.timeSeconds } as PitchReading)
        : r,
    );
    const ps = findPlateaus(readings);
    expect(ps).toHaveLength(1);
    expect(ps[0].count).toBe(59);
  });
  it('a lone wild reading (an octave slip) is left out and does not split the plateau', () => {
    const readings = simulate([{ kind: 'hold', seconds: 3, hz: 220 }]).readings.map((r, k) =>
      k === 40 && r.kind === 'ok' ? { ...r, hz: r.hz * 2 } : r,
    );
    const ps = findPlateaus(readings);
    expect(ps).toHaveLength(1);
    expect(ps[0].count).toBe(59);
    expect(Math.abs(cents(ps[0].medianHz, 220))).toBeLessThan(0.02);
  });
});

describe('bad input never throws', () => {
  it('ignores out-of-order and non-finite times, and unusable pitches', () => {
    const o = resolvePlateauOptions();
    const s = createPlateauState();
    const ok = (t: number, hz: number, u = 0.02): PitchReading => ({
      kind: 'ok',
      hz,
      uncertaintyCents: u,
      clarity: 1,
      level: LEVEL,
      windowSeconds: 0.05,
      harmonicsUsed: 1,
      timeSeconds: t,
    });
    expect(pushReading(s, ok(1, 220), o).ignored).toBeNull();
    expect(pushReading(s, ok(1, 220), o).ignored).toBe('out-of-order');
    expect(pushReading(s, ok(0.5, 220), o).ignored).toBe('out-of-order');
    expect(pushReading(s, ok(Number.NaN, 220), o).ignored).toBe('bad-time');
    expect(pushReading(s, ok(1.05, Number.NaN), o).ignored).toBeNull();
    expect(pushReading(s, ok(1.1, -5), o).status.kind).toBe('settling');
    expect(pushReading(s, ok(1.15, 220, Number.POSITIVE_INFINITY), o).status.kind).toBe('settling');
    expect(s.times).toEqual([1]);
    const u = pushReading(s, ok(2, 220), o);
    expect(u.gap).toBe(true);
    expect(s.times).toEqual([2]);
    expect(JSON.parse(JSON.stringify(s))).toEqual(s);
  });
  it('an empty series has no plateaus', () => {
    expect(findPlateaus([])).toEqual([]);
  });
});
