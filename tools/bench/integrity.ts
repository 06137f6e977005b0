/**
 * `npm run bench`: measurement-integrity cases. Dropouts, oscillator wander (flicker and white
 * frequency noise), thermal tails after each step, and sub-audio (LFO) tones. Each table prints the stated
 * standard uncertainty beside the error actually made, against the generating truth.
 */

import { estimatePitch } from '../../dsp/pitch/index.ts';
import type { PitchReading } from '../../dsp/pitch/index.ts';
import { createRun, type RunState } from '../../dsp/calibration/index.ts';
import { createOscillatorStream, trueHz, withDropouts } from '../../dsp/sim/index.ts';
import { PitchTracker } from '../../dsp/pitch/index.ts';
import { feedReading } from '../../renderer/src/engine/run-host.ts';
import { addNoise, centsError, rng, tone, type Shape } from '../../test/signals.ts';
import { table } from './shared.ts';

function fmt(c: number): string {
  if (c === 0) return '0';
  return Math.abs(c) < 0.001 ? c.toExponential(1) : c.toFixed(4);
}

const pct = (a: number, n: number) => `${n === 0 ? 0 : Math.round((100 * a) / n)} %`;

/** Dropouts cut out of a 40 dB tone, found in the data (no marker), 1 s windows. */
function dropoutCase(trials: number): boolean {
  const fs = 48000;
  const rand = rng(91);
  const rows: string[][] = [];
  let ok = true;
  for (const gapMs of [0.5, 2, 10, 20]) {
    for (const count of [1, 2, 3]) {
      let worst = 0;
      let inside = 0;
      let flagged = 0;
      let sumSigma = 0;
      let n = 0;
      for (let k = 0; k < trials; k++) {
        const shape: Shape = (['saw', 'sine', 'square', 'triangle'] as Shape[])[k % 4];
        const hz = 55 * Math.pow(2, 5 * rand());
        const x = tone(shape, hz, fs, 1.2 + (count * gapMs) / 1000, { phase: 6 * rand() });
        addNoise(x, 40, 1000 + k);
        const cuts = Array.from({ length: count }, (_, i) => ({
          atSeconds: 0.1 + ((i + 0.2 + 0.6 * rand()) * 1) / count,
          seconds: gapMs / 1000,
        }));
        const { samples } = withDropouts(x, fs, cuts);
        const r = estimatePitch(samples.subarray(0, fs), fs);
        if (r.kind !== 'ok') {
          worst = Infinity;
          continue;
        }
        n++;
        const e = centsError(r.hz, hz);
        if (Math.abs(e) > Math.abs(worst)) worst = e;
        if (Math.abs(e) <= 2 * r.uncertaintyCents) inside++;
        if ((r.breaks ?? 0) > 0) flagged++;
        sumSigma += r.uncertaintyCents;
      }
      const meets = Math.abs(worst) <= 0.01 && inside >= 0.9 * trials;
      ok &&= meets;
      rows.push([
        String(gapMs),
        String(count),
        String(trials),
        `${flagged}/${n}`,
        fmt(worst),
        fmt(n ? sumSigma / n : 0),
        pct(inside, trials),
        meets ? 'yes' : 'NO',
      ]);
    }
  }
  table(
    'Dropouts, found in the data: 1 s windows of saw, sine, square and triangle at 55–1760 Hz, 40 dB SNR, 48 kHz, samples cut out (targets: worst ≤ 0.01 cent, ≥ 90 % within 2σ)',
    [
      'gap ms',
      'per window',
      'trials',
      'flagged spans-break',
      'worst ¢',
      'mean stated σ ¢',
      'within 2σ',
      'meets',
    ],
    rows,
  );
  return ok;
}

/** Flicker and white FM: a settled 1 s capture through the tracker against the oscillator's nominal pitch. */
function wanderCase(trials: number): boolean {
  const fs = 48000;
  const rows: string[][] = [];
  let ok = true;
  for (const level of [0.003, 0.01, 0.05]) {
    let inside = 0;
    let se = 0;
    let su = 0;
    let sr = 0;
    let se2 = 0;
    let n = 0;
    let flagged = 0;
    for (let seed = 1; seed <= trials; seed++) {
      const o = {
        hz0: 60 + ((seed * 97) % 900),
        whiteFmCents: level / Math.SQRT2,
        flickerFmCents: level / Math.SQRT2,
        snrDb: 40,
        seed,
        shape: (['saw', 'square', 'triangle', 'sine'] as const)[seed % 4],
      };
      const buf = new Float32Array(3 * fs);
      createOscillatorStream(o).render(buf, 0);
      const tr = new PitchTracker({ sampleRateHz: fs });
      for (let i = 0; i < buf.length; i += 2048) tr.push(buf.subarray(i, i + 2048));
      const r = tr.averageOfSpan(1.8, 2.8);
      if (r.kind !== 'ok') continue;
      const e = 1200 * Math.log2(r.hz / trueHz(0, o));
      n++;
      se += e * e;
      su += r.uncertaintyCents;
      sr += r.components?.repeatabilityCents ?? 0;
      se2 += r.components?.estimatorCents ?? r.uncertaintyCents;
      if (Math.abs(e) <= 2 * r.uncertaintyCents) inside++;
      if (r.breaks) flagged++;
    }
    const meets = inside >= 0.9 * trials;
    ok &&= meets;
    rows.push([
      String(level),
      String(trials),
      fmt(Math.sqrt(se / Math.max(1, n))),
      fmt(su / Math.max(1, n)),
      fmt(se2 / Math.max(1, n)),
      fmt(sr / Math.max(1, n)),
      pct(inside, trials),
      String(flagged),
      meets ? 'yes' : 'NO',
    ]);
  }
  table(
    'Oscillator wander: flicker plus white FM, each level/√2 (Allan deviation at 1 s, cents; flicker between 10 ms and 2.6 s), 1 s settled captures, 40 dB SNR, 48 kHz, error against the nominal pitch (target: ≥ 90 % within 2σ)',
    [
      'level ¢',
      'trials',
      'actual scatter (RMS) ¢',
      'mean stated σ ¢',
      'estimator part ¢',
      'repeatability part ¢',
      'within 2σ',
      'false breaks',
      'meets',
    ],
    rows,
  );
  return ok;
}

/** One live run through the tracker and the run reducer on a simulated oscillator with a thermal tail. */
function tailRun(
  tail: number,
  tau: number,
  dwell: number,
  seed: number,
): { errors: number[]; sigmas: number[]; flagged: boolean[]; missed: number; toCapture: number[] } {
  const fs = 48000;
  const volts = [0, 1, 2, 3];
  const o = { hz0: 55, tailCentsPerVolt: tail, tailTauSeconds: tau, snrDb: 45, seed, shape: 'saw' as const };
  const osc = createOscillatorStream(o);
  const tr = new PitchTracker({ sampleRateHz: fs });
  // The user holds each voltage for the dwell and then moves on: the run may wait for creep only as
  // long as the dwell leaves after a settle and a 1 s window.
  let run: RunState = createRun(volts, { settleTimeoutSeconds: Math.max(0, dwell - 3) });
  const block = new Float32Array(1024);
  // Seconds from each step's voltage change to its capture being taken.
  const toCapture: number[] = [];
  const onReading = (r: PitchReading) => {
    run = feedReading(run, r, (a, b) => tr.averageOfSpan(a, b)).state;
    for (const n of run.notes) {
      if (n.kind === 'captured' && n.atSeconds !== null) toCapture.push(n.atSeconds - n.stepIndex * dwell);
    }
  };
  // Each voltage for the dwell, then back to 0 V for a second (the user turns the source down at the end).
  for (const [k, v] of [...volts, 0].entries()) {
    const hold = k === volts.length ? 1 : dwell;
    for (let t = 0; t < hold * fs; t += block.length) {
      osc.render(block, v);
      tr.push(block, onReading);
    }
  }
  const errors: number[] = [];
  const sigmas: number[] = [];
  const flagged: boolean[] = [];
  let missed = 0;
  for (const st of run.steps) {
    if (!st.capture) {
      missed++;
      continue;
    }
    errors.push(1200 * Math.log2(st.capture.hz / trueHz(st.nominalVolts, o)));
    sigmas.push(st.capture.uncertaintyCents);
    flagged.push(st.capture.flags.includes('still-settling'));
  }
  return { errors, sigmas, flagged, missed, toCapture };
}

function tailCase(quick: boolean): boolean {
  const rows: string[][] = [];
  let ok = true;
  const tails = quick ? [0, 0.2, 2] : [0, 0.2, 0.7, 2];
  const taus = quick ? [0.5, 3] : [0.5, 1.5, 3];
  const dwells = quick ? [3, 8] : [3, 5, 8];
  for (const tail of tails) {
    for (const tau of taus) {
      for (const dwell of dwells) {
        if (tail === 0 && tau !== taus[0]) continue;
        const r = tailRun(tail, tau, dwell, Math.round(tail * 100 + tau * 10 + dwell));
        let good = 0;
        let inside = 0;
        let worstUnflagged = 0;
        let worst = 0;
        r.errors.forEach((e, i) => {
          if (Math.abs(e) <= 0.02 || r.flagged[i]) good++;
          if (!r.flagged[i] && Math.abs(e) > Math.abs(worstUnflagged)) worstUnflagged = e;
          if (Math.abs(e) > Math.abs(worst)) worst = e;
          if (Math.abs(e) <= 2 * r.sigmas[i]) inside++;
        });
        const n = r.errors.length;
        // A step the run never captured (still waiting for a plateau) does not meet the target either.
        const meets = r.missed === 0 && good === n && inside >= 0.9 * n;
        ok &&= meets;
        rows.push([
          String(tail),
          String(tau),
          String(dwell),
          `${n}/${n + r.missed}`,
          String(r.flagged.filter(Boolean).length),
          fmt(worst),
          fmt(worstUnflagged),
          fmt(r.sigmas.reduce((a, b) => a + b, 0) / Math.max(1, n)),
          pct(inside, n),
          r.toCapture.length ? (r.toCapture.reduce((a, b) => a + b, 0) / r.toCapture.length).toFixed(2) : '–',
          meets ? 'yes' : 'NO',
        ]);
      }
    }
  }
  table(
    'Thermal tails: live runs 0–3 V through the tracker and the run, saw at 55 Hz·2^V, 45 dB SNR; each voltage held for the dwell, then 0 V; 0 ¢/V is the clean oscillator; time to capture from the voltage change (targets: every step captured, each within 0.02 cent of settled or flagged still-settling, ≥ 90 % within 2σ)',
    [
      '¢/V',
      'τ s',
      'dwell s',
      'captured',
      'flagged',
      'worst ¢',
      'worst unflagged ¢',
      'mean stated σ ¢',
      'within 2σ',
      'mean s to capture',
      'meets',
    ],
    rows,
  );
  return ok;
}

/** Sub-audio tones over ten cycles. */
function lfoCase(): boolean {
  const fs = 48000;
  const rows: string[][] = [];
  let ok = true;
  for (const hz of [2, 4, 8.18]) {
    for (const shape of ['saw', 'triangle', 'sine'] as Shape[]) {
      const x = tone(shape, hz, fs, 10 / hz + 0.01, { phase: 1.1 });
      addNoise(x, 40, 17);
      const r = estimatePitch(x, fs, { minHz: 2 });
      const e = r.kind === 'ok' ? centsError(r.hz, hz) : NaN;
      const meets = Math.abs(e) <= 0.05;
      ok &&= meets;
      rows.push([
        String(hz),
        shape,
        (10 / hz + 0.01).toFixed(2),
        r.kind === 'ok' ? fmt(e) : r.reason,
        r.kind === 'ok' ? fmt(r.uncertaintyCents) : '–',
        meets ? 'yes' : 'NO',
      ]);
    }
  }
  table(
    'LFO range: ten cycles at 40 dB SNR, 48 kHz, minHz 2 (target: within 0.05 cent)',
    ['Hz', 'shape', 'window s', 'error ¢', 'stated σ ¢', 'meets'],
    rows,
  );
  return ok;
}

/**
 * Sub-audio steps on the live path: the tracker following pitches down to 2 Hz (as the engine runs it,
 * renderer/src/engine/core.ts LIVE_LOWEST_HZ) and the run reducer, on simulated LFO cores at 2 Hz and at
 * MIDI note 0 (8.18 Hz) at 0 V, stepped to 1 V; each voltage held until captured (at most 30 s).
 */
function lfoLiveCase(): boolean {
  const fs = 48000;
  const rows: string[][] = [];
  let ok = true;
  for (const hz0 of [2, 440 * Math.pow(2, -69 / 12)]) {
    for (const shape of ['triangle', 'saw', 'sine'] as const) {
      const o = { hz0, shape, snrDb: 40, jitterCents: 0.003, seed: 5 };
      const osc = createOscillatorStream(o);
      const tr = new PitchTracker({ sampleRateHz: fs, lowestHz: 2 });
      let run: RunState = createRun([0, 1]);
      const block = new Float32Array(1024);
      const started: number[] = [];
      const took: number[] = [];
      let busyMs = 0;
      let audio = 0;
      for (let k = 0; k < 2; k++) {
        started.push(tr.elapsedSeconds);
        for (let t = 0; t < 30 * fs && !run.steps[k].capture; t += block.length) {
          osc.render(block, k);
          const t0 = performance.now();
          tr.push(block, (r) => {
            run = feedReading(run, r, (a, b) => tr.averageOfSpan(a, b)).state;
          });
          busyMs += performance.now() - t0;
          audio += block.length / fs;
        }
        took.push(tr.elapsedSeconds - started[k]);
      }
      run.steps.forEach((st, k) => {
        const truth = trueHz(st.nominalVolts, o);
        const c = st.capture;
        const e = c ? 1200 * Math.log2(c.hz / truth) : NaN;
        const cycles = c ? (c.endSeconds - c.startSeconds) * truth : 0;
        const meets = Math.abs(e) <= 0.05 && cycles >= 9.99;
        ok &&= meets;
        rows.push([
          truth.toFixed(3),
          shape,
          c ? cycles.toFixed(1) : '–',
          c ? fmt(e) : 'not captured',
          c ? fmt(c.uncertaintyCents) : '–',
          took[k].toFixed(1),
          k === 0 ? ((100 * busyMs) / (1000 * audio)).toFixed(0) : '',
          meets ? 'yes' : 'NO',
        ]);
      });
    }
  }
  table(
    'LFO range, live: tracker (down to 2 Hz) and run, 40 dB SNR, 48 kHz, 0 V then 1 V (target: within 0.05 cent over at least ten cycles)',
    ['Hz', 'shape', 'capture cycles', 'error ¢', 'stated σ ¢', 's to capture', 'load % of one core', 'meets'],
    rows,
  );
  return ok;
}

/**
 * The integrity cases, each `[name, meets]`.
 *
 * @param quick - Fewer trials, for a first look.
 * @param want - Whether a named case is wanted (`--only`).
 */
export function integrityCases(quick: boolean, want: (name: string) => boolean): [string, boolean][] {
  const out: [string, boolean][] = [];
  if (want('dropouts')) out.push(['dropouts', dropoutCase(quick ? 4 : 40)]);
  if (want('wander')) out.push(['wander', wanderCase(quick ? 12 : 40)]);
  if (want('tails')) out.push(['tails', tailCase(quick)]);
  if (want('lfo')) out.push(['LFO', lfoCase()]);
  if (want('lfo')) out.push(['LFO live', lfoLiveCase()]);
  return out;
}
