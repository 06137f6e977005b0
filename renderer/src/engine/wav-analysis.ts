/**
 * The worker's side of "Open WAV…": read the file's header (`dsp/io/wav.ts`), pick the channel and hand it,
 * read a block at a time (`dsp/recording/recording-input.ts`), to `analyzeRecording` (`dsp/recording/recording.ts`), the same
 * analysis `spanmeter analyze` runs, so the app and the command line give the same answer for the same
 * file. The file is never copied whole: the worker reads the `File` it was given in slices (through the
 * host's synchronous reader, `FileReaderSync` in the worker), so a recording of any length fits. Pure; no
 * worker globals, so tests call it in Node.
 */
import {
  analyzeRecording,
  type PlateauSpan,
  type RecordingAnalysisOk,
  type RecordingErrorCode,
  type RecordingOptions,
} from '../../../dsp/recording/index.ts';
import type { Hertz, Seconds, Volts } from '../../../dsp/math/index.ts';
import { wavChannelSource } from '../../../dsp/recording/index.ts';
import { bytesSource, openWav, type ByteSource, type WavErrorCode } from '../../../dsp/io/index.ts';

/** The analysis options the page may set, each as {@link RecordingOptions} documents it. */
const REQUEST_OPTIONS = [
  'settleSeconds',
  'a4Hz',
  'clockPpm',
  'fitFromVolts',
  'fitToVolts',
  'network',
  'scalePivotVolts',
  'toleranceCents',
] as const;

/**
 * What the page asks for: the plan's voltages and the channel, with the settle time, the tuning reference,
 * the Setup's clock correction, fit range and input network and the unit's tolerance as the recording
 * analysis takes them (`dsp/recording/recording.ts`, {@link RecordingOptions}).
 */
export interface WavAnalysisRequest extends Pick<RecordingOptions, (typeof REQUEST_OPTIONS)[number]> {
  /** Control voltages of the steps in the order they were played, V, each within ±12 V (`MAX_CONTROL_VOLTS`, at least one). */
  readonly points: readonly Volts[];
  /** Channel to analyse, counted from 1. */
  readonly channel: number;
}

/** The request's analysis options, the ones it sets and no others. */
function recordingOptions(request: WavAnalysisRequest): RecordingOptions {
  const options: Record<string, unknown> = { points: request.points };
  for (const key of REQUEST_OPTIONS) if (request[key] !== undefined) options[key] = request[key];
  return options as RecordingOptions;
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
 * A {@link ByteSource} over a file read in slices by a synchronous reader (the worker's `FileReaderSync`
 * over `blob.slice(start, end)`).
 *
 * @param sizeBytes - The file's size, bytes.
 * @param readRange - Returns bytes `[start, end)` of the file.
 * @example sliceByteSource(file.size, (a, b) => new Uint8Array(new FileReaderSync().readAsArrayBuffer(file.slice(a, b))))
 */
export function sliceByteSource(
  sizeBytes: number,
  readRange: (start: number, end: number) => Uint8Array,
): ByteSource {
  return {
    sizeBytes,
    read(offset, into) {
      const end = Math.min(sizeBytes, offset + into.length);
      if (end <= offset) return 0;
      const got = readRange(offset, end);
      into.set(got.subarray(0, end - offset));
      return Math.min(got.length, end - offset);
    },
  };
}

/**
 * Decodes a WAV file held in memory and analyses one channel (see {@link analyzeWavSource}).
 *
 * @param bytes - The whole file.
 * @param request - See {@link WavAnalysisRequest}.
 * @example
 * analyzeWavBytes(bytes, { points: [0, 1, 2], channel: 1 }).kind // 'ok' for a clean three-step recording
 * analyzeWavBytes(bytes, { points: [0, 1], channel: 1 })
 * // { kind: 'error', code: 'plateau-count-mismatch', message: 'found 3 plateaus (at 0.3–2.9 s, …) but 2 voltages were given', … }
 */
export function analyzeWavBytes(bytes: Uint8Array, request: WavAnalysisRequest): WavAnalysisOutcome {
  return analyzeWavSource(bytesSource(bytes), request);
}

/**
 * Reads a WAV file's header and analyses one channel as a recorded calibration pass, reading the samples
 * a block at a time. Never throws: a file it cannot read, a typed non-answer of `analyzeRecording` and
 * options it refuses all come back as `{ kind: 'error', code, message }`.
 *
 * @param src - The file's bytes, read on request (see {@link sliceByteSource}).
 * @param request - See {@link WavAnalysisRequest}.
 * @param onProgress - Called with the fraction of the file read, 0…1.
 * @example analyzeWavSource(sliceByteSource(file.size, read), { points: [0, 1, 2], channel: 1 }).kind // 'ok'
 */
export function analyzeWavSource(
  src: ByteSource,
  request: WavAnalysisRequest,
  onProgress?: (fraction: number) => void,
): WavAnalysisOutcome {
  const layout = openWav(src);
  if (layout.kind === 'error') {
    return { kind: 'error', code: layout.code, message: layout.message, plateaus: [], file: null };
  }
  const channel = request.channel;
  if (!Number.isInteger(channel) || channel < 1) {
    return {
      kind: 'error',
      code: 'bad-request',
      message: `channelNumber must be an integer ≥ 1 (channels are numbered from 1), got ${channel}`,
      plateaus: [],
      file: null,
    };
  }
  if (channel > layout.channelCount) {
    const count = layout.channelCount;
    const range = count === 1 ? 'only channel 1' : `${count} channels, numbered 1 to ${count}`;
    return {
      kind: 'error',
      code: 'no-such-channel',
      message: `no channel ${channel}: the file has ${range}`,
      plateaus: [],
      file: null,
    };
  }
  const file: WavFileInfo = {
    sampleRateHz: layout.sampleRateHz,
    durationSeconds: layout.durationSeconds,
    channelCount: layout.channelCount,
    channelNumber: channel,
  };
  try {
    const a = analyzeRecording(
      wavChannelSource(src, layout, channel - 1),
      layout.sampleRateHz,
      recordingOptions(request),
      onProgress,
    );
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
