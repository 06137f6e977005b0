/**
 * Text and JSON output of the command-line tools. Pure functions: numbers in, strings out.
 */
import type { NearestNote } from '../dsp/notes.ts';
import type { PitchNone, PitchOk } from '../dsp/reading.ts';
import type { Cents, Decibels, Hertz, Seconds, Volts } from '../dsp/units.ts';
import type { WavDecoded } from '../dsp/wav.ts';

/** One measured step: the control voltage it was taken at (null for a single steady tone) and its reading. */
export interface AnalysisStep {
  /** Control voltage of the step, V; null when the file is one steady tone of unknown voltage. */
  readonly volts: Volts | null;
  /** The pitch reading. */
  readonly reading: PitchOk;
  /** The nearest 12-TET note to the reading, at `a4Hz`. */
  readonly note: NearestNote;
  /** Tuning reference the note was taken against, Hz. */
  readonly a4Hz: Hertz;
}

/**
 * A frequency in Hz with 6 decimals: enough for a hundredth of a cent (a ratio of 5.8e-6) at any audio
 * frequency down to 1 Hz.
 *
 * @example formatHz(261.6255653) // '261.625565'
 */
export function formatHz(hz: Hertz): string {
  return hz.toFixed(6);
}

/**
 * Signed cents with a fixed number of decimals (2 by default, a hundredth of a cent).
 *
 * @example formatSignedCents(-0.004) // '+0.00'
 * @example formatSignedCents(3.14159) // '+3.14'
 */
export function formatSignedCents(cents: Cents, decimals = 2): string {
  const s = cents.toFixed(decimals);
  if (/^-0\.?0*$/.test(s)) return `+${s.slice(1)}`; // a value that rounds to zero shows no sign of its own
  return s.startsWith('-') ? s : `+${s}`;
}

/**
 * An uncertainty with two significant digits, as the GUM advises ("usually sufficient to quote u_c and U
 * to at most two significant digits", JCGM 100:2008, 7.2.6), in plain decimal notation.
 *
 * @example formatUncertainty(0.0001234) // '0.00012'
 * @example formatUncertainty(2.345) // '2.3'
 */
export function formatUncertainty(value: number): string {
  if (!Number.isFinite(value)) return String(value);
  if (value === 0) return '0';
  const decimals = Math.max(0, 1 - Math.floor(Math.log10(Math.abs(value))));
  return value.toFixed(decimals);
}

/**
 * A level in dBFS with one decimal; digital silence is `-inf`.
 *
 * @example formatDbfs(-12.04) // '-12.0 dBFS'
 */
export function formatDbfs(db: Decibels): string {
  if (db === -Infinity) return '-inf dBFS';
  return `${db.toFixed(1)} dBFS`;
}

/**
 * A duration in seconds with millisecond resolution.
 *
 * @example formatSeconds(1.5) // '1.500 s'
 */
export function formatSeconds(s: Seconds): string {
  return `${s.toFixed(3)} s`;
}

/**
 * One line describing the decoded file and the channel analysed.
 *
 * @example describeWav('vco.wav', decoded, 1) // 'vco.wav: channel 1 of 2, 48000 Hz, 24-bit PCM, 2.000 s'
 */
export function describeWav(fileName: string, decoded: WavDecoded, channelNumber: number): string {
  const format = decoded.format === 'float' ? `${decoded.bitDepth}-bit float` : `${decoded.bitDepth}-bit PCM`;
  return (
    `${fileName}: channel ${channelNumber} of ${decoded.channelCount}, ${decoded.sampleRateHz} Hz, ` +
    `${format}, ${formatSeconds(decoded.durationSeconds)}`
  );
}

/**
 * The human-readable report of one step, one `label  value` pair per line.
 *
 * The uncertainty is the standard uncertainty of the reading (one standard error, 1σ), JCGM 100:2008.
 *
 * @example formatStepReport(step).split('\n')[0] // 'frequency    261.625565 Hz'
 */
export function formatStepReport(step: AnalysisStep): string {
  const r = step.reading;
  const n = step.note;
  const uHz = r.hz * (Math.pow(2, r.uncertaintyCents / 1200) - 1);
  const rows: Array<[string, string]> = [];
  if (step.volts !== null) rows.push(['control', `${step.volts} V`]);
  rows.push(
    ['frequency', `${formatHz(r.hz)} Hz`],
    ['note', `${n.name} ${formatSignedCents(n.cents)} cents (${n.name} = ${formatHz(n.noteHz)} Hz)`],
    ['reference', `A4 = ${step.a4Hz} Hz, middle C = C4`],
    [
      'uncertainty',
      `±${formatUncertainty(r.uncertaintyCents)} cents (1σ, standard error), ±${formatUncertainty(uHz)} Hz`,
    ],
    ['level', `${formatDbfs(r.level.rmsDbfs)} RMS, ${formatDbfs(r.level.peakDbfs)} peak`],
    [
      'window',
      `${formatSeconds(r.windowSeconds)}, ${r.harmonicsUsed} harmonic${r.harmonicsUsed === 1 ? '' : 's'}, ` +
        `clarity ${r.clarity.toFixed(3)}`,
    ],
  );
  const width = Math.max(...rows.map(([l]) => l.length)) + 2;
  return rows.map(([l, v]) => `${l.padEnd(width)}${v}`).join('\n');
}

/** A finite number, or null (JSON has no infinities). */
function jsonNumber(v: number): number | null {
  return Number.isFinite(v) ? v : null;
}

/**
 * The machine-readable result: exactly one line, `{"steps":[{…}, …]}`.
 *
 * Each step holds `volts` (null for a single steady tone), `hz` and `uncertaintyCents` (1σ), then `note`,
 * `noteHz`, `centsFromNote`, `a4Hz`, `clarity`, `rmsDbfs`, `peakDbfs`, `windowSeconds` and `harmonicsUsed`.
 * Numbers keep full double precision; non-finite levels are null.
 *
 * @example stepsToJson([step]) // '{"steps":[{"volts":null,"hz":261.6255…,"uncertaintyCents":0.0012,…}]}'
 */
export function stepsToJson(steps: readonly AnalysisStep[]): string {
  return JSON.stringify({
    steps: steps.map((s) => ({
      volts: s.volts,
      hz: s.reading.hz,
      uncertaintyCents: s.reading.uncertaintyCents,
      note: s.note.name,
      noteHz: s.note.noteHz,
      centsFromNote: s.note.cents,
      a4Hz: s.a4Hz,
      clarity: s.reading.clarity,
      rmsDbfs: jsonNumber(s.reading.level.rmsDbfs),
      peakDbfs: jsonNumber(s.reading.level.peakDbfs),
      windowSeconds: s.reading.windowSeconds,
      harmonicsUsed: s.reading.harmonicsUsed,
    })),
  });
}

/**
 * Why no pitch was found, as one line for a person, from the reading's typed reason.
 *
 * @example describeNoPitch({ kind: 'none', reason: 'silent', level, timeSeconds: 0 })
 * // 'no pitch: the signal is too quiet to measure (-92.3 dBFS RMS)'
 */
export function describeNoPitch(r: PitchNone): string {
  const rms = formatDbfs(r.level.rmsDbfs);
  const coarse = r.coarseHz !== undefined ? ` (a rough estimate is ${r.coarseHz.toFixed(2)} Hz)` : '';
  switch (r.reason) {
    case 'silent':
      return `no pitch: the signal is too quiet to measure (${rms} RMS)`;
    case 'clipped':
      return (
        `no pitch: the recording is clipped (${(100 * r.level.clippedFraction).toFixed(1)} % of samples at full ` +
        'scale); record again with less level into the interface'
      );
    case 'no-pitch':
      return 'no pitch: the signal is not periodic enough to measure (noise, a chord, or a changing pitch?)';
    case 'below-range':
      return `no pitch: the tone is below the range this file can measure${coarse}`;
    case 'above-range':
      return `no pitch: the tone is above the range this sample rate can measure${coarse}`;
    case 'warming-up':
      return `no pitch: the recording is too short for this tone to be measured${coarse}`;
    case 'bad-samples':
      return 'no pitch: the file holds samples that are not numbers (NaN or infinite)';
  }
}
