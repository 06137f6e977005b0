/**
 * The worker's side of "Open WAV…": decode the file (`dsp/wav.ts`), pick the channel and hand it to
 * `analyzeRecording` (`dsp/recording.ts`), the same analysis `spanmeter analyze` runs, so the app and
 * the command line give the same answer for the same file. Pure; no worker globals, so tests call it
 * in Node.
 */
import type { InputNetwork } from '../../../dsp/advice.ts';
import {
  analyzeRecording,
  type PlateauSpan,
  type RecordingAnalysisOk,
  type RecordingErrorCode,
} from '../../../dsp/recording.ts';
import type { Hertz, Ppm, Seconds, Volts } from '../../../dsp/units.ts';
import { decodeWav, pickChannel, type WavErrorCode } from '../../../dsp/wav.ts';

/**
 * What the page asks for: the plan's voltages, the settle time, the tuning reference and the channel,
 * and the Setup's clock correction, fit range and input network.
 */
export interface WavAnalysisRequest {
  /** Control voltages of the steps in the order they were played, V, each within ±12 V (`MAX_CONTROL_VOLTS`, at least one). */
  readonly points: readonly Volts[];
  /** Channel to analyse, counted from 1. */
  readonly channel: number;
  /** Time the pitch must stay in the band to count as settled, s, 0…60 (dsp/recording.ts default 0.5). */
  readonly settleSeconds?: Seconds;
  /** Tuning reference for note names, Hz, 380…500 (default 440, ISO 16:1975). */
  readonly a4Hz?: Hertz;
  /** Interface clock error, ppm (positive = fast), within ±1000 (dsp/clock.ts); default 0. */
  readonly clockPpm?: Ppm;
  /** Fit range, V (inclusive), within ±12; default every step (dsp/recording.ts). */
  readonly fitFromVolts?: Volts;
  readonly fitToVolts?: Volts;
  /** The input network, for resistor values in the scale advice (dsp/advice.ts). */
  readonly network?: InputNetwork;
}

/** The file as decoded, for the status line. */
export interface WavFileInfo {
  readonly sampleRateHz: Hertz;
  readonly durationSeconds: Seconds;
  readonly channelCount: number;
  readonly channelNumber: number;
}

/** Why a file gave no analysis: the decoder's code, the analysis's code, or options it refused. */
export type WavAnalysisErrorCode = WavErrorCode | RecordingErrorCode | 'bad-request';

/** Outcome of {@link analyzeWavBytes}. Structured-clone data, posted to the page as it is. */
export type WavAnalysisOutcome =
  | { readonly kind: 'ok'; readonly file: WavFileInfo; readonly analysis: RecordingAnalysisOk }
  | {
      readonly kind: 'error';
      readonly code: WavAnalysisErrorCode;
      /** One line for a person, naming what was found (for a count mismatch: how many plateaus and when). */
      readonly message: string;
      /** The settled steps found (a plateau-count mismatch), else empty. */
      readonly plateaus: readonly PlateauSpan[];
      /** The file, when it could be decoded. */
      readonly file: WavFileInfo | null;
    };

/**
 * Decodes a WAV file and analyses one channel as a recorded calibration pass. Never throws: a file it
 * cannot read, a typed non-answer of `analyzeRecording` and options it refuses all come back as
 * `{ kind: 'error', code, message }`.
 *
 * @param bytes - The whole file.
 * @param request - See {@link WavAnalysisRequest}.
 * @example
 * analyzeWavBytes(bytes, { points: [0, 1, 2], channel: 1 }).kind // 'ok' for a clean three-step recording
 * analyzeWavBytes(bytes, { points: [0, 1], channel: 1 })
 * // { kind: 'error', code: 'plateau-count-mismatch', message: 'found 3 plateaus (at 0.3–2.9 s, …) but 2 voltages were given', … }
 */
export function analyzeWavBytes(bytes: Uint8Array, request: WavAnalysisRequest): WavAnalysisOutcome {
  const decoded = decodeWav(bytes);
  if (decoded.kind === 'error') {
    return { kind: 'error', code: decoded.code, message: decoded.message, plateaus: [], file: null };
  }
  let picked: ReturnType<typeof pickChannel>;
  try {
    picked = pickChannel(decoded, request.channel);
  } catch (err) {
    return { kind: 'error', code: 'bad-request', message: messageOf(err), plateaus: [], file: null };
  }
  if (picked.kind === 'error') {
    return { kind: 'error', code: picked.code, message: picked.message, plateaus: [], file: null };
  }
  const file: WavFileInfo = {
    sampleRateHz: decoded.sampleRateHz,
    durationSeconds: decoded.durationSeconds,
    channelCount: decoded.channelCount,
    channelNumber: picked.channelNumber,
  };
  try {
    const a = analyzeRecording(picked.samples, picked.sampleRateHz, {
      points: request.points,
      ...(request.settleSeconds === undefined ? {} : { settleSeconds: request.settleSeconds }),
      ...(request.a4Hz === undefined ? {} : { a4Hz: request.a4Hz }),
      ...(request.clockPpm === undefined ? {} : { clockPpm: request.clockPpm }),
      ...(request.fitFromVolts === undefined ? {} : { fitFromVolts: request.fitFromVolts }),
      ...(request.fitToVolts === undefined ? {} : { fitToVolts: request.fitToVolts }),
      ...(request.network === undefined ? {} : { network: request.network }),
    });
    if (a.kind === 'error') {
      return { kind: 'error', code: a.code, message: a.message, plateaus: a.plateaus, file };
    }
    return { kind: 'ok', file, analysis: a };
  } catch (err) {
    return { kind: 'error', code: 'bad-request', message: messageOf(err), plateaus: [], file };
  }
}

function messageOf(err: unknown): string {
  return err instanceof Error ? err.message : String(err);
}
