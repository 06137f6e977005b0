/**
 * The report of a held tone that moved (`dsp/recording/steady-tone.ts`): start, end, drift rate and their standard
 * uncertainties, and the warm-up status, as text and as one JSON object.
 */
import { applyClockPpm } from '../dsp/io/index.ts';
import { nearestNote } from '../dsp/math/index.ts';
import type { SteadyToneOk } from '../dsp/recording/index.ts';
import type { Hertz, Ppm } from '../dsp/math/index.ts';
import { formatCents, formatClock, formatHz, formatUncertainty } from '../dsp/format/index.ts';

function corrected(hz: Hertz, ppm: Ppm): Hertz {
  return ppm === 0 ? hz : applyClockPpm(hz, ppm);
}

function noteText(hz: Hertz, a4Hz: Hertz): string {
  const n = nearestNote(hz, a4Hz);
  return `${n.name} ${formatCents(n.cents)} cents`;
}

function warmUpText(tone: SteadyToneOk): string {
  const d = tone.drift;
  if (d.kind === 'settled') {
    return `settled after ${formatClock(d.warmUpSeconds, 1)} (drift under 0.1 cent/min over 2-minute windows)`;
  }
  if (d.kind === 'not-yet-settled') {
    return `not settled: the last 2 minutes drift ${formatCents(d.driftRateCentsPerMinute, 3)} cent/min (settled is under 0.1)`;
  }
  return 'too short to judge (under 2 minutes)';
}

/**
 * The text report of a moving tone: one `label  value` pair per line, uncertainties as standard
 * uncertainties (1σ, JCGM 100:2008).
 *
 * @param tone - The analysis.
 * @param a4Hz - Tuning reference for note names, Hz.
 * @param clockPpm - Interface clock error, ppm; every Hz is corrected by it.
 * @example formatMovingTone(tone, 440, 0).split('\n')[0] // 'a moving pitch: +1.65 ± 0.02 cents over 59:59.9'
 */
export function formatMovingTone(tone: SteadyToneOk, a4Hz: Hertz, clockPpm: Ppm): string {
  const t = tone.trend;
  const u = formatUncertainty;
  const rows: [string, string][] = [
    [
      'start',
      `${formatHz(corrected(t.startHz, clockPpm))} Hz ± ${u(t.endUncertaintyCents)} cents   ${noteText(t.startHz, a4Hz)}   at ${formatClock(t.startSeconds, 1)}`,
    ],
    [
      'end',
      `${formatHz(corrected(t.endHz, clockPpm))} Hz ± ${u(t.endUncertaintyCents)} cents   ${noteText(t.endHz, a4Hz)}   at ${formatClock(t.endSeconds, 1)}`,
    ],
    ['drift', `${formatCents(t.driftCents, 3)} ± ${u(t.driftUncertaintyCents)} cents`],
    [
      'drift rate',
      `${formatCents(t.rateCentsPerMinute, 4)} ± ${u(t.rateUncertaintyCentsPerMinute)} cents/min`,
    ],
    [
      'mean',
      `${formatHz(corrected(t.meanHz, clockPpm))} Hz ± ${u(t.meanUncertaintyCents)} cents (the line at mid-time)`,
    ],
    ['scatter', `${u(t.scatterCents)} cents about the line`],
    ['warm-up', warmUpText(tone)],
    ['readings', `${tone.pitchedCount} of ${tone.readingCount} held a pitch`],
  ];
  const width = Math.max(...rows.map(([k]) => k.length)) + 2;
  const head =
    `a moving pitch: ${formatCents(t.driftCents, 2)} ± ${u(t.driftUncertaintyCents)} cents over ` +
    `${formatClock(t.endSeconds - t.startSeconds, 1)}` +
    (tone.moving && Math.abs(t.driftCents) <= 2 * t.driftUncertaintyCents
      ? ' (no drift beyond its uncertainty)'
      : '');
  return [head, ...rows.map(([k, v]) => `${k.padEnd(width)}${v}`)].join('\n');
}

/** A finite number, else null (JSON has no infinity). */
function num(v: number): number | null {
  return Number.isFinite(v) ? v : null;
}

/**
 * The JSON object of a moving tone (`analyze --json` without `--points` on a tone that moved).
 *
 * @example movingToneToJson(tone, 440, 0).kind // 'moving-tone'
 */
export function movingToneToJson(tone: SteadyToneOk, a4Hz: Hertz, clockPpm: Ppm): Record<string, unknown> {
  const t = tone.trend;
  const d = tone.drift;
  return {
    kind: 'moving-tone',
    a4Hz,
    clockPpm,
    startSeconds: t.startSeconds,
    endSeconds: t.endSeconds,
    startHz: corrected(t.startHz, clockPpm),
    endHz: corrected(t.endHz, clockPpm),
    endUncertaintyCents: num(t.endUncertaintyCents),
    meanHz: corrected(t.meanHz, clockPpm),
    meanUncertaintyCents: num(t.meanUncertaintyCents),
    driftCents: t.driftCents,
    driftUncertaintyCents: num(t.driftUncertaintyCents),
    driftCentsPerMinute: t.rateCentsPerMinute,
    driftCentsPerMinuteUncertainty: num(t.rateUncertaintyCentsPerMinute),
    scatterCents: t.scatterCents,
    effectiveReadings: t.effectiveCount,
    startNote: nearestNote(t.startHz, a4Hz).name,
    endNote: nearestNote(t.endHz, a4Hz).name,
    warmUp:
      d.kind === 'settled'
        ? { kind: 'settled', warmUpSeconds: d.warmUpSeconds, rateCentsPerMinute: d.driftRateCentsPerMinute }
        : d.kind === 'not-yet-settled'
          ? { kind: 'not-yet-settled', rateCentsPerMinute: d.driftRateCentsPerMinute }
          : { kind: 'too-short' },
    readings: tone.readingCount,
    pitchedReadings: tone.pitchedCount,
  };
}
