/**
 * Text and JSON output of the command-line tools. Pure functions: numbers in, strings out. The numbers
 * themselves are written by the formatters every surface shares (dsp/format); this file lays them out.
 */
import type { ResistorChange } from '../dsp/advice/index.ts';
import { centsToPpm, ppmToCents, type ClockFromReferenceOk } from '../dsp/io/index.ts';
import { formatOhms } from '../dsp/converter/index.ts';
import { nearestNote, type NearestNote } from '../dsp/math/index.ts';
import type { RecordingAnalysisOk } from '../dsp/recording/index.ts';
import type { PitchNone, PitchOk } from '../dsp/pitch/index.ts';
import type { Hertz, Ppm, Volts } from '../dsp/math/index.ts';
import {
  formatCents,
  formatDbfs,
  formatHz,
  formatPpm,
  formatSeconds,
  formatUncertainty,
  formatVolts,
  hzColumnDecimals,
} from '../dsp/format/index.ts';
import type { WavDecoded } from '../dsp/io/index.ts';

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
 * @example formatStepReport(step).split('\n')[0] // 'frequency    261.626 Hz'
 */
export function formatStepReport(step: AnalysisStep): string {
  const r = step.reading;
  const n = step.note;
  const uHz = r.hz * (Math.pow(2, r.uncertaintyCents / 1200) - 1);
  const rows: Array<[string, string]> = [];
  if (step.volts !== null) rows.push(['control', formatVolts(step.volts)]);
  rows.push(
    ['frequency', `${formatHz(r.hz)} Hz`],
    ['note', `${n.name} ${formatCents(n.cents)} cents (${n.name} = ${formatHz(n.noteHz)} Hz)`],
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
  const breaks = r.breaks ?? 0;
  if (breaks > 0) {
    rows.push([
      'breaks',
      `${breaks} in the signal (samples missing): each unbroken stretch fitted on its own, flag spans-break`,
    ]);
  }
  const width = Math.max(...rows.map(([l]) => l.length)) + 2;
  return rows.map(([l, v]) => `${l.padEnd(width)}${v}`).join('\n');
}

/**
 * Why no pitch was found, as one line for a person, from the reading's typed reason.
 *
 * @example describeNoPitch({ kind: 'none', reason: 'silent', level, timeSeconds: 0 })
 * // 'no pitch: the signal is too quiet to measure (−92.3 dBFS RMS)'
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

// ---------------------------------------------------------------------------------------------------
// Multi-step recordings
// ---------------------------------------------------------------------------------------------------

/** Left- or right-aligned columns under a header, two spaces apart. */
function alignColumns(
  header: readonly string[],
  rows: readonly (readonly string[])[],
  left: ReadonlySet<number>,
) {
  const widths = header.map((h, c) => Math.max(h.length, ...rows.map((r) => r[c].length)));
  const line = (cells: readonly string[]) =>
    cells
      .map((cell, c) => (left.has(c) ? cell.padEnd(widths[c]) : cell.padStart(widths[c])))
      .join('  ')
      .trimEnd();
  return [line(header), ...rows.map(line)].join('\n');
}

/**
 * The error table of a multi-step recording: one aligned row per step with the control voltage, the
 * frequency, the nearest note and the cents from it, the cents from the ideal 1 V/oct line through the
 * first step, the interval error to the previous step, the standard uncertainty (1σ, JCGM 100:2008) and
 * the settled span it was measured in.
 *
 * @example formatRecordingTable(analysis).split('\n')[0]
 * // '    V           Hz  note  from note  from ideal  interval error  ±1σ cents  settled'
 */
export function formatRecordingTable(analysis: RecordingAnalysisOk): string {
  const hasMeasured = analysis.steps.some((s) => s.measuredVolts !== null);
  const header = [
    'V',
    ...(hasMeasured ? ['meter V'] : []),
    'Hz',
    'note',
    'from note',
    'from ideal',
    'interval error',
    '±1σ cents',
    'settled',
  ];
  // One number of decimals for the column: the most any row needs to resolve a hundredth of a cent.
  const hzDecimals = hzColumnDecimals(analysis.steps.map((s) => s.hz));
  const rows = analysis.steps.map((s) => [
    formatVolts(s.volts, false),
    ...(hasMeasured ? [formatVolts(s.measuredVolts, false)] : []),
    formatHz(s.hz, hzDecimals),
    s.note.name,
    formatCents(s.note.cents),
    formatCents(s.centsFromIdeal),
    formatCents(s.intervalErrorCents),
    formatUncertainty(s.uncertaintyCents),
    `${s.startSeconds.toFixed(1)}–${s.endSeconds.toFixed(1)} s${s.source === 'readings' ? ' *' : ''}`,
  ]);
  const noteCol = hasMeasured ? 3 : 2;
  return alignColumns(header, rows, new Set([noteCol, header.length - 1]));
}

/**
 * The tracking fit in two or three lines: octaves per volt and the scale error with their standard
 * errors, the pitch at 0 V, the largest residual and the span; the trusted middle and the end bends
 * when the bend analysis found any.
 *
 * @example formatFitSummary(analysis).split('\n')[0]
 * // 'scale     1.000012 octaves per volt: +0.01 ± 0.0010 cents per octave (0.000 to 4.000 V)'
 */
export function formatFitSummary(analysis: RecordingAnalysisOk): string {
  const fit = analysis.fit;
  if (fit === null) return 'fit       none: needs two or more steps at different voltages';
  const lines: Array<[string, string]> = [
    [
      'scale',
      `${fit.octavesPerVolt.toFixed(6)} octaves per volt: ${formatCents(fit.scaleErrorCentsPerOctave)} ± ` +
        `${formatUncertainty(fit.scaleErrorStdErrCents)} cents per octave ` +
        `(${formatVolts(fit.fromVolts, false)} to ${formatVolts(fit.toVolts)})`,
    ],
    [
      'at 0 V',
      `${formatHz(fit.hzAt0V)} Hz (${nearestNoteText(fit.hzAt0V, analysis.a4Hz)}), ±${formatUncertainty(fit.hzAt0VStdErrCents)} cents`,
    ],
    ['residual', `largest ${formatUncertainty(fit.maxAbsResidualCents)} cents from the fitted line`],
  ];
  const rf = analysis.result.fit;
  const model = rf?.model ?? null;
  if (rf && model) {
    const budgetText = (b: NonNullable<typeof rf.scaleBudget>, unit: string) =>
      `U = ${formatUncertainty(b.expandedCents)} ${unit} (k = ${b.coverageFactor.toFixed(2)}; ` +
      b.terms
        .filter((t) => t.standardCents > 0)
        .sort((a, c) => c.standardCents - a.standardCents)
        .map((t) => `${t.source} ${formatUncertainty(t.standardCents)}`)
        .join(', ') +
      ')';
    if (rf.scaleBudget) lines.splice(1, 0, ['', budgetText(rf.scaleBudget, 'cents per octave')]);
    if (rf.pitchAt0VBudget) lines.push(['', `0 V pitch ${budgetText(rf.pitchAt0VBudget, 'cents')}`]);
    const terms = ['line'];
    if (model.hfTerm !== 'none') {
      terms.push(
        model.mixtureResolved
          ? `HF (reset time ${(model.resetSeconds * 1e6).toPrecision(2)} µs + bulk resistance ${(model.bulkAlphaSeconds * 1e6).toPrecision(2)} µs)`
          : `HF (equivalent reset time ${((model.equivalentResetSeconds ?? 0) * 1e6).toPrecision(2)} ± ${formatUncertainty((model.equivalentResetSecondsStdErr ?? 0) * 1e6)} µs)`,
      );
    }
    if (model.lowEndTerm) terms.push(`low-end floor ${model.lowEndHz.toPrecision(2)} Hz`);
    lines.push(['model', `${terms.join(' + ')}, chosen by ${model.criterion}`]);
    if (rf.straightLine) {
      lines.push([
        'line',
        `the straight line through every step: ${formatCents(rf.straightLine.scaleErrorCentsPerOctave)} cents per octave, ` +
          `${formatHz(rf.straightLine.hzAt0V)} Hz at 0 V (droop and suspect steps included)`,
      ]);
    }
    for (const st of analysis.result.steps) {
      if (st.flags.includes('suspect-voltage')) {
        lines.push([
          'suspect',
          `step ${st.index + 1} (${formatVolts(st.volts)}) plays as if at ${formatVolts(st.likelyVolts)}: left out; re-check its voltage`,
        ]);
      }
    }
    const creeping = analysis.result.steps.filter((st) => st.flags.includes('still-settling'));
    if (creeping.length > 0) {
      const most = Math.max(...creeping.map((st) => st.components?.settlingCents ?? 0)) * Math.sqrt(3);
      lines.push([
        'settling',
        `${creeping.length === 1 ? 'step' : 'steps'} ${creeping.map((st) => `${st.index + 1} (${formatVolts(st.volts)})`).join(', ')} ` +
          `still crept in ${creeping.length === 1 ? 'its window' : 'their windows'} (up to ${formatUncertainty(most)} cents, counted in the uncertainty); hold each voltage longer`,
      ]);
    }
    if (rf.tolerance) lines.push(['tolerance', rf.tolerance.text]);
  }
  const b = model ? null : analysis.bends;
  if (b !== null) {
    const ends: string[] = [];
    for (const [label, e] of [
      ['top', b.highEnd],
      ['bottom', b.lowEnd],
    ] as const) {
      if (e.kind === 'bent') {
        const which =
          e.steps.length === 1 ? `the ${label} step bends` : `the ${label} ${e.steps.length} steps bend`;
        ends.push(
          `${which} ${e.direction} of the middle line, ${Math.abs(e.centsAtEnd).toFixed(2)} cents at ` +
            `${formatVolts(e.steps[0].volts)}`,
        );
      }
    }
    if (ends.length > 0) {
      const m = b.middle;
      lines.push([
        'bends',
        `${ends.join('; ')}; middle ${formatVolts(m.fromVolts, false)} to ${formatVolts(m.toVolts)}: ` +
          `${formatCents(m.scaleErrorCentsPerOctave)} cents per octave`,
      ]);
    }
  }
  const width = Math.max(...lines.map(([l]) => l.length)) + 2;
  return lines.map(([l, v]) => `${l.padEnd(width)}${v}`).join('\n');
}

function nearestNoteText(hz: Hertz, a4Hz: Hertz): string {
  const n = nearestNote(hz, a4Hz);
  return `${n.name} ${formatCents(n.cents)} cents`;
}

/**
 * The line saying that frequencies carry a clock correction, with its size in cents
 * (`1200·log2(1 + ppm·10⁻⁶)`, `dsp/io/clock.ts` ppmToCents).
 *
 * @example describeClockCorrection(100) // 'clock     corrected by +100.000 ppm (+0.1731 cents); intervals are unaffected'
 */
export function describeClockCorrection(ppm: Ppm): string {
  return (
    `clock     corrected by ${formatPpm(ppm)} ppm (${formatCents(ppmToCents(ppm), 4)} cents); ` +
    'intervals are unaffected'
  );
}

/** A reference tone read to find the interface's clock error (`analyze --true-hz`). */
export interface ClockReference {
  /** Frequency read through the interface, Hz. */
  readonly measuredHz: Hertz;
  /** The reference's true frequency, Hz. */
  readonly trueHz: Hertz;
  /** `clockPpmFromReference(measuredHz, trueHz)` (dsp/io/clock.ts). */
  readonly clock: ClockFromReferenceOk;
  /** The reading, for its uncertainty and level. */
  readonly reading: PitchOk;
}

/** Standard uncertainty of the clock error, ppm: the reading's, as a ratio (`centsToPpm`). */
function clockUncertaintyPpm(c: ClockReference): Ppm {
  return centsToPpm(c.reading.uncertaintyCents);
}

/**
 * The clock error from a reference tone, for a person: the reading, the error in ppm and cents, and the
 * option to pass on.
 *
 * @example formatClockReference(c).split('\n')[1]
 * // 'clock      +37.500 ppm ±0.0012 (1σ): the interface clock runs fast, so readings come out 0.0649 cents low'
 */
export function formatClockReference(c: ClockReference): string {
  const ppm = c.clock.ppm;
  const how =
    ppm === 0
      ? 'the interface clock is exact'
      : `the interface clock runs ${ppm > 0 ? 'fast' : 'slow'}, so readings come out ` +
        `${Math.abs(c.clock.cents).toFixed(4)} cents ${ppm > 0 ? 'low' : 'high'}`;
  const rows: Array<[string, string]> = [
    [
      'reference',
      `${formatHz(c.measuredHz)} Hz read, ${c.trueHz} Hz true (±${formatUncertainty(c.reading.uncertaintyCents)} cents, 1σ)`,
    ],
    ['clock', `${formatPpm(ppm)} ppm ±${formatUncertainty(clockUncertaintyPpm(c))} (1σ): ${how}`],
    ['use', `--clock-ppm ${ppm.toFixed(3)} when analysing recordings made through this interface`],
    ['note', 'the correction is only as good as the reference tone'],
  ];
  const width = Math.max(...rows.map(([l]) => l.length)) + 2;
  return rows.map(([l, v]) => `${l.padEnd(width)}${v}`).join('\n');
}

/**
 * The clock error from a reference tone as one JSON object: `{ measuredHz, trueHz, clockPpm,
 * clockPpmUncertainty, cents, uncertaintyCents }` (uncertainties 1σ).
 *
 * @example clockReferenceToJson(c) // { measuredHz: 999.9625…, trueHz: 1000, clockPpm: 37.50…, … }
 */
export function clockReferenceToJson(c: ClockReference): Record<string, number> {
  return {
    measuredHz: c.measuredHz,
    trueHz: c.trueHz,
    clockPpm: c.clock.ppm,
    clockPpmUncertainty: clockUncertaintyPpm(c),
    cents: c.clock.cents,
    uncertaintyCents: c.reading.uncertaintyCents,
  };
}

function partLabel(part: ResistorChange['part']): string {
  return { series: 'series Rs', shunt: 'shunt Rsh', input: 'input Rin', feedback: 'feedback Rf' }[part];
}

/**
 * One line per resistor change of a scale item: the exact value and the nearest E24 and E96 values
 * (IEC 60063) with the scale error each would leave.
 *
 * @example formatResistorChange(r)
 * // 'series Rs 100 kΩ → 99.73 kΩ exact; E24 100 kΩ leaves +3.20, E96 100 kΩ leaves +3.20 cents per octave'
 */
export function formatResistorChange(r: ResistorChange): string {
  const pick = (v: ResistorChange['e24']) =>
    `${v.series} ${formatOhms(v.ohms)} leaves ${formatCents(v.resultingScaleErrorCentsPerOctave)}`;
  return (
    `${partLabel(r.part)} ${formatOhms(r.fromOhms)} → ${formatOhms(r.toOhms)} exact; ` +
    `${pick(r.e24)}, ${pick(r.e96)} cents per octave`
  );
}

/**
 * The advice as numbered lines (trimmer in brackets), each resistor change indented under its item,
 * then the next measurement and the caution.
 *
 * @example formatAdvice(analysis).split('\n')[0] // '1. [scale] The scale is within tolerance: …'
 */
export function formatAdvice(analysis: RecordingAnalysisOk): string {
  const a = analysis.advice;
  if (a === null) return '';
  const lines = a.items.flatMap((it, i) => [
    `${i + 1}. [${it.trimmer}] ${it.text}`,
    ...(it.resistors ?? []).map((r) => `   resistor: ${formatResistorChange(r)}`),
  ]);
  lines.push(`next: ${a.next}`, `caution: ${a.caution}`);
  return lines.join('\n');
}

/**
 * The whole report of a multi-step recording: a summary line, the table, the fit and the advice.
 *
 * @example formatRecordingReport(analysis).split('\n')[0]
 * // '5 settled steps (each measured after 0.5 s to settle); A4 = 440 Hz, middle C = C4'
 */
export function formatRecordingReport(analysis: RecordingAnalysisOk): string {
  const n = analysis.steps.length;
  const parts = [
    `${n} settled step${n === 1 ? '' : 's'} (each measured after ${analysis.settleSeconds} s to settle); ` +
      `A4 = ${analysis.a4Hz} Hz, middle C = C4`,
    ...(analysis.clockPpm === 0 ? [] : [describeClockCorrection(analysis.clockPpm)]),
    '',
    formatRecordingTable(analysis),
  ];
  if (analysis.steps.some((s) => s.source === 'readings')) {
    parts.push('* too short to measure as one window: the mean of its live readings');
  }
  parts.push('', formatFitSummary(analysis));
  const advice = formatAdvice(analysis);
  if (advice !== '') parts.push('', advice);
  return parts.join('\n');
}
