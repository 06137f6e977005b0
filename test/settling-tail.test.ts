/**
 * Settling on the slope (issue 9, item 3): the exponential tail fit that bounds the creep left in a capture
 * window, and live runs through the tracker and the run on the simulator's thermal tail, judged against the
 * simulator's settled pitch (dsp/sim/simulate.ts `trueHz`, the tail decayed). The tail model
 * c∞ + a·exp(−t/τ) is the exponential settling model (common practice, no source); the residual creep enters
 * the step's uncertainty as a rectangular term combined by root-sum-square (JCGM 100:2008 §4.3.7 and eq. 10).
 */
import { describe, expect, it } from 'vitest';
import { createRun, fitThermalTail, type RunState } from '../dsp/calibration/index.ts';
import { PitchTracker, type PitchReading } from '../dsp/pitch/index.ts';
import { analyzeRecording } from '../dsp/recording/index.ts';
import { formatFitSummary } from '../cli/format.ts';
import { createOscillatorStream, planSchedule, renderOscillator, trueHz } from '../dsp/sim/index.ts';
import { feedReading } from '../renderer/src/engine/run-host.ts';
import { rng } from './signals.ts';

/** Gaussian noise by Box–Muller (common practice, no source). */
function gauss(rand: () => number): number {
  return Math.sqrt(-2 * Math.log(1 - rand())) * Math.cos(2 * Math.PI * rand());
}

/** Readings every 50 ms from t0 to t1 of c∞ + a·exp(−(t − tStep)/τ) plus white noise of σ. */
function tailReadings(a: number, tau: number, sigma: number, seed: number, t0: number, t1: number) {
  const rand = rng(seed);
  const times: number[] = [];
  const cents: number[] = [];
  for (let t = t0; t <= t1 + 1e-9; t += 0.05) {
    times.push(t);
    cents.push(5 + a * Math.exp(-t / tau) + sigma * gauss(rand));
  }
  return { times, cents };
}

/** The true mean of a·exp(−t/τ) over [w0, w1]: a·τ/T·(e^{−w0/τ} − e^{−w1/τ}) (the integral of the model). */
function trueResidual(a: number, tau: number, w0: number, w1: number): number {
  return ((a * tau) / (w1 - w0)) * (Math.exp(-w0 / tau) - Math.exp(-w1 / tau));
}

describe('fitThermalTail', () => {
  it('bounds the creep left in the window by the truth, over tails of 0.2–2 cent and τ of 0.5–3 s', () => {
    let covered = 0;
    let cases = 0;
    for (const a of [0.2, 0.7, 2]) {
      for (const tau of [0.5, 1.5, 3]) {
        for (let seed = 1; seed <= 4; seed++) {
          // The plateau from 1 s after the step; a 1 s window ending 3 s after it.
          const { times, cents } = tailReadings(a, tau, 0.004, seed * 31 + tau * 7, 1, 3);
          const fit = fitThermalTail(times, cents, 1, 3, 2, 3, 3.5)!;
          const truth = trueResidual(a, tau, 2, 3);
          cases++;
          // The run states the creep as a rectangular u = B/√3 (JCGM 100:2008 §4.3.7): 2u must cover it.
          if (Math.abs(truth) <= (2 * fit.residualBoundCents) / Math.sqrt(3)) covered++;
          // A bound is at least the fitted residual itself.
          expect(fit.residualBoundCents).toBeGreaterThanOrEqual(Math.abs(fit.residualCents));
        }
      }
    }
    // The target of issue 9: at least 90 % within 2σ.
    expect(covered / cases).toBeGreaterThanOrEqual(0.9);
  });

  it('finds a strong tail (resolved, τ close) and sees no tail in a steady pitch', () => {
    const { times, cents } = tailReadings(1, 1, 0.003, 5, 0.5, 4);
    const fit = fitThermalTail(times, cents, 0.5, 4, 3, 4, 3.5)!;
    expect(fit.resolved).toBe(true);
    expect(fit.tauSeconds).toBeGreaterThan(0.8);
    expect(fit.tauSeconds).toBeLessThan(1.25);
    expect(fit.settledCents).toBeCloseTo(5, 2);
    const steady = tailReadings(0, 1, 0.003, 6, 0.5, 4);
    const none = fitThermalTail(steady.times, steady.cents, 0.5, 4, 3, 4, 3.5)!;
    expect(none.resolved).toBe(false);
    // Noise of 0.003 cent cannot hide more creep than a few thousandths of a cent.
    expect(none.residualBoundCents).toBeLessThan(0.01);
  });

  it('needs 8 readings and a longest τ above 0.05 s', () => {
    const { times, cents } = tailReadings(1, 1, 0.003, 7, 1, 1.3);
    expect(fitThermalTail(times, cents, 1, 1.3, 1, 1.3, 3.5)).toBeNull();
    expect(() => fitThermalTail(times, cents, 1, 1.3, 1, 1.3, 0.05)).toThrow(
      /tauMaxSeconds must be in \(0\.05, 600\] seconds, got 0\.05/,
    );
  });
});

/** A live run 0–3 V, each voltage held `dwell` s then back to 0 V, as the bench's tails table. */
function liveRun(tail: number, tau: number, dwell: number, seed: number) {
  const fs = 48000;
  const volts = [0, 1, 2, 3];
  const o = { hz0: 55, tailCentsPerVolt: tail, tailTauSeconds: tau, snrDb: 45, seed, shape: 'saw' as const };
  const osc = createOscillatorStream(o);
  const tr = new PitchTracker({ sampleRateHz: fs });
  let run: RunState = createRun(volts, { settleTimeoutSeconds: Math.max(0, dwell - 3) });
  const capturedAt: number[] = [];
  const onReading = (r: PitchReading) => {
    run = feedReading(run, r, (a, b) => tr.averageOfSpan(a, b)).state;
    for (const n of run.notes)
      if (n.kind === 'captured' && n.atSeconds !== null) capturedAt.push(n.atSeconds);
  };
  const block = new Float32Array(1024);
  for (const [k, v] of [...volts, 0].entries()) {
    for (let t = 0; t < (k === volts.length ? 1 : dwell) * fs; t += block.length) {
      osc.render(block, v);
      tr.push(block, onReading);
    }
  }
  return { run, o, capturedAt };
}

describe('live runs on a thermal tail (simulator truth)', () => {
  for (const [tail, tau, dwell] of [
    [2, 0.5, 5],
    [0.7, 1.5, 5],
    [0.2, 3, 8],
    // The strongest tail in the shortest holds: creeping at 0.3–0.5 cent/s, every step is still captured.
    [2, 3, 3],
    [2, 1.5, 5],
  ] as const) {
    it(`${tail} cent/V, τ ${tau} s, ${dwell} s dwell: each capture within 0.02 cent of settled or flagged, within 2σ`, () => {
      const { run, o } = liveRun(tail, tau, dwell, 7);
      let inside = 0;
      for (const st of run.steps) {
        const c = st.capture!;
        expect(c).toBeTruthy();
        const e = 1200 * Math.log2(c.hz / trueHz(st.nominalVolts, o));
        if (!c.flags.includes('still-settling')) expect(Math.abs(e)).toBeLessThanOrEqual(0.02);
        if (Math.abs(e) <= 2 * c.uncertaintyCents) inside++;
        // The settling part is in the stated uncertainty (root-sum-square, JCGM 100:2008 eq. 10).
        const k = c.components!;
        expect(c.uncertaintyCents).toBeCloseTo(
          Math.hypot(k.estimatorCents, k.repeatabilityCents, k.settlingCents),
          12,
        );
      }
      expect(inside).toBeGreaterThanOrEqual(0.9 * run.steps.length);
    });
  }

  it('a clean oscillator is captured as soon as its window completes: no wait, no flag', () => {
    const { run, capturedAt } = liveRun(0, 1, 3, 3);
    expect(capturedAt).toHaveLength(4);
    run.steps.forEach((st, i) => {
      const c = st.capture!;
      expect(c.flags).toEqual([]);
      // The window did not slide: it is the first captureSeconds after the plateau settled, and it was
      // taken on the reading that completed it.
      expect(c.endSeconds - c.startSeconds).toBeCloseTo(1, 9);
      expect(capturedAt[i] - c.endSeconds).toBeLessThan(0.051);
      // Settled within about 0.7 s of the voltage change (the plateau's 0.5 s plus the tracker's window).
      expect(c.startSeconds - i * 3).toBeLessThan(0.8);
    });
  });
});

describe('recordings on a thermal tail (simulator truth)', () => {
  for (const [tail, tau, hold] of [
    [-0.7, 1.5, 3],
    [-0.7, 1.5, 8],
    [2, 0.5, 3],
    [0.2, 3, 5],
  ] as const) {
    it(`${tail} cent/V, τ ${tau} s, ${hold} s holds: the last settled window, its creep bounded and flagged`, () => {
      const rec = renderOscillator(
        { hz0: 55, tailCentsPerVolt: tail, tailTauSeconds: tau, snrDb: 45, seed: 4, sampleRateHz: 48_000 },
        planSchedule([0, 1, 2, 3], { holdSeconds: hold, glideSeconds: 0.15 }),
      );
      const a = analyzeRecording(rec.samples, rec.sampleRateHz, { points: [0, 1, 2, 3] });
      if (a.kind !== 'ok') throw new Error(a.message);
      let inside = 0;
      a.steps.forEach((st, i) => {
        // The simulator's pitch at the end of the hold, the tail as far decayed as it got (dsp/sim/simulate.ts).
        const e = 1200 * Math.log2(st.hz / rec.truth[i].recordedHz);
        if (!st.flags.includes('still-settling')) expect(Math.abs(e)).toBeLessThanOrEqual(0.02);
        if (Math.abs(e) <= 2 * st.uncertaintyCents) inside++;
        // The window is the plateau's last settled part: it ends where the plateau's readings end.
        expect(st.endSeconds - st.windowEndSeconds).toBeLessThan(0.2);
      });
      expect(inside).toBeGreaterThanOrEqual(0.9 * a.steps.length);
      // The command line's report names the creeping steps (none here is the 0 V step, which has no tail).
      const flagged = a.steps.filter((st) => st.flags.includes('still-settling'));
      if (flagged.length > 0) {
        expect(formatFitSummary(a)).toMatch(
          /settling +steps? 2 \(1\.000 V\).* still crept in (its window|their windows) \(up to [0-9.]+ cents, counted in the uncertainty\); hold each voltage longer/,
        );
      }
    });
  }
});
