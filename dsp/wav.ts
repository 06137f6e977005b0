/**
 * Reading WAV files: a structural check of the RIFF/WAVE container done here, then sample decoding by the
 * `wavefile` package.
 *
 * The container layout (a 12-byte RIFF header, then chunks of a 4-character id, a 32-bit size and a body
 * padded to an even length; a `fmt ` chunk describing the samples and a `data` chunk holding them) follows
 * the RIFF/WAVE specification: IBM & Microsoft, "Multimedia Programming Interface and Data Specifications
 * 1.0", 1991. WAVE_FORMAT_EXTENSIBLE (format tag 0xFFFE, whose 16-byte sub-format GUID carries the real
 * format tag in its first two bytes) follows Microsoft, "Multiple Channel Audio Data and WAVE Files" (from
 * memory).
 *
 * Why check the header here and not leave it all to `wavefile`: its parser throws on many faults, reads a
 * short data chunk without saying so, treats an extensible 32-bit float file as 32-bit integers and stumbles
 * over some `LIST` chunks. So this module walks the chunks itself, gives every fault a typed code and a
 * specific message, and hands `wavefile` a canonical file (the 16-byte `fmt ` chunk and the `data` chunk,
 * nothing else) to unpack. Nothing here throws, whatever the bytes.
 *
 * Pure: no Node or DOM APIs (`wavefile`'s own types need neither).
 */
import wavefile from 'wavefile';
import type { Hertz, Seconds } from './units.ts';

/** Lowest sample rate accepted, Hz (telephone-band rate; below it a file is almost surely damaged). */
export const MIN_SAMPLE_RATE_HZ: Hertz = 8000;
/** Highest sample rate accepted, Hz (the top rate of current audio interfaces). */
export const MAX_SAMPLE_RATE_HZ: Hertz = 384000;

/** How the samples are stored: integer PCM or IEEE 754 floating point. */
export type WavSampleFormat = 'pcm' | 'float';

/** A successfully decoded WAV file. */
export interface WavDecoded {
  readonly kind: 'ok';
  /** Frames per second, Hz, in [8000, 384000]. */
  readonly sampleRateHz: Hertz;
  /** Number of channels, ≥ 1. */
  readonly channelCount: number;
  /** Number of sample frames (samples per channel), ≥ 1. */
  readonly frameCount: number;
  /** Bits per stored sample (the container size): 8, 16, 24 or 32 for PCM, 32 or 64 for float. */
  readonly bitDepth: number;
  /** Integer PCM or floating point. */
  readonly format: WavSampleFormat;
  /** True when the file used the WAVE_FORMAT_EXTENSIBLE header. */
  readonly extensible: boolean;
  /** `frameCount / sampleRateHz`, seconds. */
  readonly durationSeconds: Seconds;
  /**
   * One array per channel, in file order (`channels[0]` is channel 1), normalised so that integer full scale
   * is ±1: a PCM value v of b bits becomes v / 2^(b−1) (8-bit, being unsigned, (v − 128) / 128). Float
   * samples are passed through unchanged (and may exceed ±1 or be NaN if the file holds such values).
   */
  readonly channels: readonly Float32Array[];
}

/**
 * Why a file could not be read.
 *
 * - `not-wav`: the bytes are not a RIFF/WAVE file at all.
 * - `truncated`: the file ends before a chunk it declares is complete (most often the data chunk).
 * - `empty`: the file holds no audio frames.
 * - `malformed`: a WAVE file whose header is inconsistent (no `fmt ` or `data` chunk, zero channels, …).
 * - `unsupported-format`: a valid file in a format Spanmeter does not read (compressed audio, RF64, an odd
 *   bit depth, a sample rate outside 8000–384000 Hz).
 * - `decode-failed`: the header looked right but the sample decoder failed (should not happen).
 * - `no-such-channel`: {@link pickChannel} was asked for a channel the file does not have.
 */
export type WavErrorCode =
  | 'not-wav'
  | 'truncated'
  | 'empty'
  | 'malformed'
  | 'unsupported-format'
  | 'decode-failed'
  | 'no-such-channel';

/** A file that could not be read, with a typed code and a one-line message meant for a person. */
export interface WavError {
  readonly kind: 'error';
  readonly code: WavErrorCode;
  /** One line, starting with what went wrong: "truncated: the data chunk declares 96000 bytes but …". */
  readonly message: string;
}

/** The outcome of {@link decodeWav}. */
export type WavResult = WavDecoded | WavError;

/** One channel picked out of a decoded file. */
export interface WavChannel {
  readonly kind: 'ok';
  /** The channel's number, counted from 1. */
  readonly channelNumber: number;
  /** The channel's samples, normalised to ±1 full scale (the same array as in `decoded.channels`). */
  readonly samples: Float32Array;
  /** Frames per second, Hz. */
  readonly sampleRateHz: Hertz;
}

// Format tags from Microsoft's mmreg.h (from memory); only 1, 3 and 0xFFFE are read.
const FORMAT_PCM = 0x0001;
const FORMAT_FLOAT = 0x0003;
const FORMAT_EXTENSIBLE = 0xfffe;
const FORMAT_NAMES: Readonly<Record<number, string>> = {
  0x0002: 'Microsoft ADPCM',
  0x0006: 'A-law',
  0x0007: 'mu-law',
  0x0011: 'IMA ADPCM',
  0x0031: 'GSM 6.10',
  0x0050: 'MPEG audio',
  0x0055: 'MPEG Layer 3 (MP3)',
};
/** Bytes 2…15 of every KSDATAFORMAT_SUBTYPE_* GUID derived from a format tag (…-0000-0010-8000-00AA00389B71). */
const GUID_TAIL = [0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xaa, 0x00, 0x38, 0x9b, 0x71];

/** Signatures of other audio containers, to name what a non-WAV file probably is (from memory). */
const OTHER_FORMATS: ReadonlyArray<readonly [string, string]> = [
  ['ID3', 'an MP3 file'],
  ['fLaC', 'a FLAC file'],
  ['OggS', 'an Ogg file'],
  ['FORM', 'an AIFF or other IFF file'],
  ['caff', 'a Core Audio file'],
];

function fail(code: WavErrorCode, message: string): WavError {
  return { kind: 'error', code, message };
}

function plural(n: number, one: string, many = `${one}s`): string {
  return `${n} ${n === 1 ? one : many}`;
}

function ascii(bytes: Uint8Array, start: number, length: number): string {
  let s = '';
  for (let i = start; i < start + length && i < bytes.length; i++) s += String.fromCharCode(bytes[i]);
  return s;
}

function isPrintable(s: string): boolean {
  return /^[\x20-\x7e]+$/.test(s);
}

/** Quote a chunk id or signature for a message: `'LIST'`, or its bytes in hex when not printable. */
function quoteId(bytes: Uint8Array, start: number, length: number): string {
  const s = ascii(bytes, start, length);
  if (s.length > 0 && isPrintable(s)) return `'${s}'`;
  const hex: string[] = [];
  for (let i = start; i < start + length && i < bytes.length; i++) {
    hex.push(bytes[i].toString(16).padStart(2, '0'));
  }
  return `bytes ${hex.join(' ')}`;
}

function describeStart(bytes: Uint8Array): string {
  const known = OTHER_FORMATS.find(([sig]) => ascii(bytes, 0, sig.length) === sig);
  if (known) return `it starts with '${known[0]}' (${known[1]}) instead of 'RIFF'`;
  if (bytes.length >= 2 && bytes[0] === 0xff && (bytes[1] & 0xe0) === 0xe0) {
    return `it starts with an MPEG audio frame header (an MP3 file) instead of 'RIFF'`;
  }
  return `it starts with ${quoteId(bytes, 0, 4)} instead of 'RIFF'`;
}

interface FmtInfo {
  readonly formatTag: number;
  readonly extensible: boolean;
  readonly channelCount: number;
  readonly sampleRateHz: number;
  readonly blockAlign: number;
  readonly bitsPerSample: number;
}

/** Parse and check a `fmt ` chunk body. */
function readFmt(
  view: DataView,
  bytes: Uint8Array,
  start: number,
  size: number,
  le: boolean,
): FmtInfo | WavError {
  if (size < 16) {
    return fail(
      'malformed',
      `malformed: the 'fmt ' chunk is ${plural(size, 'byte')} long; it needs at least 16`,
    );
  }
  let formatTag = view.getUint16(start, le);
  const channelCount = view.getUint16(start + 2, le);
  const sampleRateHz = view.getUint32(start + 4, le);
  const blockAlign = view.getUint16(start + 12, le);
  const bitsPerSample = view.getUint16(start + 14, le);
  let extensible = false;
  if (formatTag === FORMAT_EXTENSIBLE) {
    extensible = true;
    const cbSize = size >= 18 ? view.getUint16(start + 16, le) : 0;
    if (size < 40 || cbSize < 22) {
      return fail(
        'malformed',
        `malformed: the 'fmt ' chunk says WAVE_FORMAT_EXTENSIBLE but is ${plural(size, 'byte')} long ` +
          `with a ${cbSize}-byte extension; it needs 40 bytes with a 22-byte extension`,
      );
    }
    const guid = start + 24;
    formatTag = view.getUint16(guid, le);
    const tailMatches = GUID_TAIL.every((b, i) => bytes[guid + 2 + i] === b);
    if (!tailMatches) {
      return fail(
        'unsupported-format',
        'unsupported format: the WAVE_FORMAT_EXTENSIBLE sub-format GUID is not a standard PCM or float one',
      );
    }
  }
  if (channelCount === 0) {
    return fail('malformed', "malformed: the 'fmt ' chunk declares zero channels");
  }
  if (formatTag !== FORMAT_PCM && formatTag !== FORMAT_FLOAT) {
    const name = FORMAT_NAMES[formatTag];
    const tag = `0x${formatTag.toString(16).padStart(4, '0')}`;
    return fail(
      'unsupported-format',
      `unsupported format: the samples are ${name ? `${name}-compressed (format tag ${tag})` : `in format tag ${tag}`}; ` +
        'Spanmeter reads uncompressed PCM and floating-point WAV files',
    );
  }
  const float = formatTag === FORMAT_FLOAT;
  const allowed = float ? [32, 64] : [8, 16, 24, 32];
  if (!allowed.includes(bitsPerSample)) {
    return fail(
      'unsupported-format',
      `unsupported format: ${bitsPerSample}-bit ${float ? 'floating-point' : 'PCM'} samples; ` +
        `Spanmeter reads ${float ? '32- and 64-bit float' : '8-, 16-, 24- and 32-bit PCM'}`,
    );
  }
  if (sampleRateHz < MIN_SAMPLE_RATE_HZ || sampleRateHz > MAX_SAMPLE_RATE_HZ) {
    return fail(
      'unsupported-format',
      `unsupported sample rate: ${sampleRateHz} Hz; Spanmeter reads ${MIN_SAMPLE_RATE_HZ}–${MAX_SAMPLE_RATE_HZ} Hz`,
    );
  }
  const expectedAlign = (channelCount * bitsPerSample) / 8;
  if (blockAlign !== expectedAlign) {
    return fail(
      'malformed',
      `malformed: the 'fmt ' chunk gives a frame size (block align) of ${plural(blockAlign, 'byte')}, ` +
        `but ${plural(channelCount, 'channel')} of ${bitsPerSample}-bit samples take ${expectedAlign}`,
    );
  }
  return { formatTag, extensible, channelCount, sampleRateHz, blockAlign, bitsPerSample };
}

interface Located {
  readonly fmt: FmtInfo;
  readonly le: boolean;
  readonly dataStart: number;
  readonly dataBytes: number;
}

/** Walk the chunks, check the structure, and locate the `fmt ` information and the sample bytes. */
function locate(bytes: Uint8Array): Located | WavError {
  const n = bytes.length;
  if (n === 0) return fail('empty', 'empty: the file is 0 bytes long');
  const magic = ascii(bytes, 0, 4);
  if (magic === 'RF64' || magic === 'BW64') {
    return fail(
      'unsupported-format',
      `unsupported format: ${magic} (64-bit WAV for files over 4 GB) is not read; save the recording as a plain WAV`,
    );
  }
  if (magic !== 'RIFF' && magic !== 'RIFX') {
    if (n < 4 && 'RIFF'.startsWith(magic) && isPrintable(magic)) {
      return fail('truncated', `truncated: the file ends after ${plural(n, 'byte')}, inside the RIFF header`);
    }
    return fail('not-wav', `not a WAV file: ${describeStart(bytes)}`);
  }
  if (n < 12) {
    return fail(
      'truncated',
      `truncated: the file ends after ${plural(n, 'byte')}, inside the 12-byte RIFF header`,
    );
  }
  const le = magic === 'RIFF';
  const form = ascii(bytes, 8, 4);
  if (form !== 'WAVE') {
    return fail('not-wav', `not a WAV file: a RIFF file of type ${quoteId(bytes, 8, 4)} instead of 'WAVE'`);
  }
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const riffEnd = 8 + view.getUint32(4, le);

  let fmt: FmtInfo | undefined;
  let data: { start: number; declared: number; present: number } | undefined;
  const seen: string[] = [];
  let off = 12;
  while (off + 8 <= n) {
    const idQuoted = quoteId(bytes, off, 4);
    const id = ascii(bytes, off, 4);
    const size = view.getUint32(off + 4, le);
    const body = off + 8;
    const present = Math.min(size, n - body);
    if (id === 'data') {
      if (data) break; // a second data chunk: only the first is read (common practice, no source)
      data = { start: body, declared: size, present };
      if (present < size) break; // nothing can follow a short data chunk
    } else if (id === 'fmt ') {
      if (present < size) {
        return fail(
          'truncated',
          `truncated: the 'fmt ' chunk declares ${plural(size, 'byte')} but only ${present} are present`,
        );
      }
      if (!fmt) {
        const parsed = readFmt(view, bytes, body, size, le);
        if ('kind' in parsed) return parsed;
        fmt = parsed;
      }
    } else if (present < size) {
      // A damaged chunk after all the audio does not matter; one before it does.
      if (data && fmt) break;
      return fail(
        'truncated',
        `truncated: the file ends inside the ${idQuoted} chunk (it declares ${plural(size, 'byte')}, ` +
          `${present} are present), before the ${fmt ? "'data'" : "'fmt ' and 'data'"} chunk`,
      );
    }
    seen.push(idQuoted);
    if (data && fmt) break;
    off = body + size + (size & 1);
  }

  if (!fmt || !data) {
    const missing = !fmt && !data ? "'fmt ' and 'data' chunks" : !fmt ? "'fmt ' chunk" : "'data' chunk";
    if (riffEnd > n) {
      return fail(
        'truncated',
        `truncated: the RIFF header declares ${plural(riffEnd, 'byte')} but the file has ${n}, ` +
          `and it ends before the ${missing}`,
      );
    }
    const found = seen.length > 0 ? `it holds ${seen.join(', ')}` : 'it holds no chunks';
    return fail('malformed', `malformed: no ${missing}; ${found}`);
  }

  const frameBytes = fmt.blockAlign;
  if (data.present < data.declared) {
    const seconds = (k: number): string => (Math.floor(k / frameBytes) / fmt.sampleRateHz).toFixed(3);
    const declaredText =
      data.declared === 0xffffffff ? 'the largest possible size (a recording that was never finished?)' : '';
    return fail(
      'truncated',
      `truncated: the data chunk declares ${plural(data.declared, 'byte')}` +
        `${declaredText ? `, ${declaredText},` : ''} but only ${data.present} are present ` +
        `(${seconds(data.present)} s of ${seconds(data.declared)} s)`,
    );
  }
  const frameCount = Math.floor(data.declared / frameBytes);
  if (frameCount === 0) {
    const trailing = n - data.start;
    const hint =
      data.declared === 0 && trailing >= frameBytes
        ? `; the data chunk declares 0 bytes though ${trailing} follow it (was the recording stopped before its header was finished?)`
        : '';
    return fail('empty', `empty: the file holds no audio frames${hint}`);
  }
  return { fmt, le, dataStart: data.start, dataBytes: frameCount * frameBytes };
}

/** A minimal file of the same samples: RIFF header, 16-byte `fmt ` chunk (tag 1 or 3), `data` chunk. */
function canonicalFile(bytes: Uint8Array, loc: Located): Uint8Array {
  const out = new Uint8Array(44 + loc.dataBytes);
  const v = new DataView(out.buffer);
  const le = loc.le;
  const put = (at: number, s: string): void => {
    for (let i = 0; i < 4; i++) out[at + i] = s.charCodeAt(i);
  };
  const f = loc.fmt;
  put(0, le ? 'RIFF' : 'RIFX');
  v.setUint32(4, 36 + loc.dataBytes, le);
  put(8, 'WAVE');
  put(12, 'fmt ');
  v.setUint32(16, 16, le);
  v.setUint16(20, f.formatTag, le);
  v.setUint16(22, f.channelCount, le);
  v.setUint32(24, f.sampleRateHz, le);
  v.setUint32(28, f.sampleRateHz * f.blockAlign, le);
  v.setUint16(32, f.blockAlign, le);
  v.setUint16(34, f.bitsPerSample, le);
  put(36, 'data');
  v.setUint32(40, loc.dataBytes, le);
  out.set(bytes.subarray(loc.dataStart, loc.dataStart + loc.dataBytes), 44);
  return out;
}

/**
 * Decode the bytes of a WAV file into normalised Float32 channels.
 *
 * Reads uncompressed PCM (8-, 16-, 24- and 32-bit integer) and IEEE float (32- and 64-bit) samples, any
 * number of channels, little-endian `RIFF` or big-endian `RIFX`, plain or WAVE_FORMAT_EXTENSIBLE headers,
 * at 8000–384000 Hz. Chunks other than `fmt ` and `data` (`LIST`, `JUNK`, `fact`, `bext`, `cue `, …) are
 * skipped wherever they sit; bytes after the audio that do not form a chunk are ignored. A trailing partial
 * frame is dropped. Never throws: every fault comes back as a {@link WavError}.
 *
 * Container layout: IBM & Microsoft, "Multimedia Programming Interface and Data Specifications 1.0" (1991).
 *
 * @param bytes - The whole file, any length (0 bytes gives `empty`).
 * @returns The decoded file, or a typed error with a one-line message.
 * @example
 * decodeWav(new TextEncoder().encode('ID3\u0004'))
 * // { kind: 'error', code: 'not-wav', message: "not a WAV file: it starts with 'ID3' (an MP3 file) instead of 'RIFF'" }
 */
export function decodeWav(bytes: Uint8Array): WavResult {
  try {
    if (!(bytes instanceof Uint8Array)) {
      return fail('not-wav', 'not a WAV file: the input is not a byte array');
    }
    const loc = locate(bytes);
    if ('kind' in loc) return loc;
    const f = loc.fmt;
    const frameCount = loc.dataBytes / f.blockAlign;
    const wav = new wavefile.WaveFile(canonicalFile(bytes, loc));
    const unpacked = wav.getSamples(false, Float32Array) as unknown as Float32Array | Float32Array[];
    const channels: Float32Array[] =
      f.channelCount === 1 ? [unpacked as Float32Array] : [...(unpacked as Float32Array[])];
    if (channels.length !== f.channelCount || channels.some((c) => c.length !== frameCount)) {
      return fail('decode-failed', 'decode failed: the sample decoder returned the wrong number of samples');
    }
    const float = f.formatTag === FORMAT_FLOAT;
    if (!float) {
      // Scaling by a power of two is exact in binary floating point.
      const scale = 1 / 2 ** (f.bitsPerSample - 1);
      const offset = f.bitsPerSample === 8 ? 128 : 0; // 8-bit WAV samples are unsigned
      for (const c of channels) for (let i = 0; i < c.length; i++) c[i] = (c[i] - offset) * scale;
    }
    return {
      kind: 'ok',
      sampleRateHz: f.sampleRateHz,
      channelCount: f.channelCount,
      frameCount,
      bitDepth: f.bitsPerSample,
      format: float ? 'float' : 'pcm',
      extensible: f.extensible,
      durationSeconds: frameCount / f.sampleRateHz,
      channels,
    };
  } catch (err) {
    const why = err instanceof Error ? err.message : String(err);
    return fail('decode-failed', `decode failed: ${why}`);
  }
}

/**
 * Pick one channel of a decoded file. Channels are numbered from 1 (channel 1 is the first, or left, one),
 * the convention of the command line's `--channel N`.
 *
 * @param decoded - A file returned by {@link decodeWav}.
 * @param channelNumber - Channel number, an integer ≥ 1. A number above the file's channel count gives a
 *   `no-such-channel` error; a number that is not an integer ≥ 1 is misuse and throws.
 * @throws RangeError when `channelNumber` is not an integer ≥ 1.
 * @example
 * pickChannel(stereo, 3)
 * // { kind: 'error', code: 'no-such-channel', message: 'no channel 3: the file has 2 channels, numbered 1 to 2' }
 */
export function pickChannel(decoded: WavDecoded, channelNumber: number): WavChannel | WavError {
  if (!Number.isInteger(channelNumber) || channelNumber < 1) {
    throw new RangeError(
      `channelNumber must be an integer ≥ 1 (channels are numbered from 1), got ${channelNumber}`,
    );
  }
  const count = decoded.channelCount;
  if (channelNumber > count) {
    const range = count === 1 ? 'only channel 1' : `${count} channels, numbered 1 to ${count}`;
    return fail('no-such-channel', `no channel ${channelNumber}: the file has ${range}`);
  }
  return {
    kind: 'ok',
    channelNumber,
    samples: decoded.channels[channelNumber - 1],
    sampleRateHz: decoded.sampleRateHz,
  };
}
