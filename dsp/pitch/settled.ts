/**
 * A settled measurement: one precise window with the oscillator's own repeatability in its uncertainty.
 * Shared by the live tracker's captures (`PitchTracker.averageOfSpan`) and the analysis of recordings.
 */

import { subWindowRepeatability } from './allan.ts';
import type { PitchEstimator } from './pitch.ts';
import type { PitchReading } from './reading.ts';
import { MAX_BREAKS } from './refine.ts';

/** Most sub-windows a settled window is split into for the repeatability estimate. */
export const MAX_SUB_WINDOWS = 8;

const subCents = new Float64Array(MAX_SUB_WINDOWS);
const subSigma = new Float64Array(MAX_SUB_WINDOWS);
const subBreaks = new Float64Array(MAX_BREAKS);

function setBreaksWithin(
  est: PitchEstimator,
  breaks: ArrayLike<number>,
  count: number,
  from: number,
  len: number,
): void {
  let nb = 0;
  for (let q = 0; q < count && nb < MAX_BREAKS; q++) {
    const b = breaks[q] - from;
    if (b > 0 && b < len) subBreaks[nb++] = b;
  }
  est.setBreaks(subBreaks, nb);
}

/**
 * Measures `n` samples of `src` from `start` as one window, then the same span as J back-to-back
 * sub-windows of at least 8 periods each (3 ≤ J ≤ 8), fitted with the whole window's harmonics and hum handling
 * (`PitchEstimator.estimateWithPlan`): the excess two-sample scatter of the sub-window
 * results is the oscillator's wander (`subWindowRepeatability`, dsp/pitch/allan.ts), which joins the estimator's
 * standard error as a root-sum-square (JCGM 100:2008 eq. 10). The effective degrees of freedom follow
 * Welch–Satterthwaite (GUM G.4.1), the estimator's part (already widened for its own) counted as exact.
 *
 * @param est - A settled estimator (all harmonics).
 * @param src - Samples.
 * @param start - First sample of the window.
 * @param n - Window length, samples.
 * @param timeSeconds - Time stamp for the reading.
 * @param breaks - Break positions, samples from `start` (dropped blocks); breaks in the data are found anyway.
 * @param breakCount - How many entries of `breaks` to use.
 * @returns The reading with `components` (settlingCents 0: the caller adds creep), or the full window's none.
 * @example measureSettled(estimator, samples, s0, 48000, t).components?.repeatabilityCents
 */
export function measureSettled(
  est: PitchEstimator,
  src: ArrayLike<number>,
  start: number,
  n: number,
  timeSeconds: number,
  breaks: ArrayLike<number> = subBreaks,
  breakCount = 0,
): PitchReading {
  setBreaksWithin(est, breaks, breakCount, 0, n);
  const full = est.estimate(src, start, n, timeSeconds, 1, 0);
  if (full.kind !== 'ok') return full;
  const periods = (n * full.hz) / est.sampleRateHz;
  const J = Math.min(MAX_SUB_WINDOWS, Math.floor(periods / 8), Math.floor(n / 256));
  let used = 0;
  // The sub-windows are fitted with the whole window's plan (its harmonics, its hum handling): a short
  // window's own spectrum is coarse, and beside mains hum it decides differently from one sub-window to the
  // next. That scatter is the estimator's, not the oscillator's: with 50 Hz hum at −30 to −35 dB it stated 0.2
  // to 0.6 cent of "repeatability" for steps near 33 Hz that lay within 0.0013 cent of the simulator's truth
  // (now 0.005 to 0.02 cent).
  const plan = est.lastPlan();
  if (J >= 3 && plan !== null) {
    const len = Math.floor(n / J);
    for (let j = 0; j < J; j++) {
      setBreaksWithin(est, breaks, breakCount, j * len, len);
      const r = est.estimateWithPlan(src, start + j * len, len, full.hz, plan);
      if (r.kind !== 'ok') continue;
      subCents[used] = 1200 * Math.log2(r.hz / full.hz);
      subSigma[used] = r.uncertaintyCents;
      used++;
    }
  }
  const estimatorCents = full.uncertaintyCents;
  let repeatabilityCents = 0;
  let dof = Infinity;
  if (used >= 3) {
    const rep = subWindowRepeatability(subCents.subarray(0, used), subSigma.subarray(0, used));
    repeatabilityCents = rep.repeatabilityCents;
    const uc2 = estimatorCents * estimatorCents + repeatabilityCents * repeatabilityCents;
    if (repeatabilityCents > 0) dof = (uc2 * uc2) / (repeatabilityCents ** 4 / rep.dof);
  }
  return {
    ...full,
    uncertaintyCents: Math.sqrt(estimatorCents ** 2 + repeatabilityCents ** 2),
    components: { estimatorCents, repeatabilityCents, settlingCents: 0, dof },
  };
}
