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
 * This module walks the chunks itself, gives every fault a typed code and a specific message, and decodes
 * the samples itself, a stretch at a time: {@link openWav} reads only the header through a
 * {@link ByteSource} (a file in memory, on disk or in a Blob) and {@link readWavFrames} decodes any run of
 * frames, so a recording of any length is read in bounded memory. Files over 4 GB use RF64 (EBU Tech 3306)
 * or BW64 (ITU-R BS.2088): the same chunks, with 64-bit sizes in a `ds64` chunk. Nothing here throws,
 * whatever the bytes. (`wavefile`, a general-purpose WAV library, is the outside reference the tests
 * compare the decoded samples with.)
 *
 * Pure: no Node or DOM APIs.
 */
import type { Hertz, Seconds } from '../math/index.ts';

/** Lowest sample rate accepted, Hz (telephone-band rate; below it a file is almost surely damaged). */
export const MIN_SAMPLE_RATE_HZ: Hertz = 8000;
/** Highest sample rate accepted, Hz (the top rate of current audio interfaces). */
export const MAX_SAMPLE_RATE_HZ: Hertz = 384000;

/** How the samples are stored: integer PCM or IEEE 754 floating point. */
export type WavSampleFormat = 'pcm' | 'float';

/** What a readable WAV file's header says about its samples (shared by {@link WavDecoded} and {@link WavLayout}). */
export interface WavHeaderInfo {
  readonly kind: 'ok';
  /** Frames per second, Hz, in [8000, 384000]. */
  readonly sampleRateHz: Hertz;
  /** Number of channels, ≥ 1. */
  readonly channelCount: number;
  /** Number of sample frames (samples per channel), ≥ 1; may exceed 2^32 in an RF64 file. */
  readonly frameCount: number;
  /** Bits per stored sample (the container size): 8, 16, 24 or 32 for PCM, 32 or 64 for float. */
  readonly bitDepth: number;
  /** Integer PCM or floating point. */
  readonly format: WavSampleFormat;
  /** True when the file used the WAVE_FORMAT_EXTENSIBLE header. */
  readonly extensible: boolean;
  /** `frameCount / sampleRateHz`, seconds. */
  readonly durationSeconds: Seconds;
}

/** A successfully decoded WAV file. */
export interface WavDecoded extends WavHeaderInfo {
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
 * - `unsupported-format`: a valid file in a format Spanmeter does not read (compressed audio, an odd bit
 *   depth, a sample rate outside 8000–384000 Hz).
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

/**
 * Where the bytes of a file come from: a whole file in memory ({@link bytesSource}), a file on disk read
 * with positioned reads (the command line), or a `Blob` read in slices (the app's worker). Offsets and
 * sizes are plain numbers, exact up to 2^53 bytes, so files over 4 GB are addressed like any other.
 */
export interface ByteSource {
  /** Length of the file, bytes, ≥ 0. */
  readonly sizeBytes: number;
  /**
   * Copies bytes `[offset, offset + into.length)` of the file into `into` from index 0.
   *
   * @returns The number of bytes copied: `into.length`, or fewer only where the file ends.
   */
  read(offset: number, into: Uint8Array): number;
}

/**
 * A {@link ByteSource} over bytes already in memory.
 *
 * @param bytes - The whole file.
 * @example bytesSource(new Uint8Array(44)).sizeBytes // 44
 */
export function bytesSource(bytes: Uint8Array): ByteSource {
  return {
    sizeBytes: bytes.length,
    read(offset, into) {
      const n = Math.max(0, Math.min(into.length, bytes.length - offset));
      into.set(bytes.subarray(offset, offset + n));
      return n;
    },
  };
}

/**
 * The layout of a readable WAV file, found by {@link openWav} from its header alone: what the samples
 * are and where they lie. Reading them is {@link readWavFrames}'s job, any stretch at a time.
 */
export interface WavLayout extends WavHeaderInfo {
  /** `RIFF`, `RIFX` (big-endian), `RF64` (EBU Tech 3306) or `BW64` (ITU-R BS.2088). */
  readonly container: 'RIFF' | 'RIFX' | 'RF64' | 'BW64';
  /** Offset of the first sample byte in the file, bytes. */
  readonly dataOffset: number;
  /** Bytes per frame (the `fmt ` chunk's block align). */
  readonly frameBytes: number;
  /** True for little-endian samples (all but RIFX). */
  readonly littleEndian: boolean;
}

/** Bytes the chunk walker reads at a time. */
const WALK_BUFFER_BYTES = 1 << 16;
/** Chunk ids listed by name in a "no 'data' chunk" message before "…". */
const MAX_LISTED_CHUNKS = 8;
/** Most chunks walked before the audio: real files hold a handful; more is damage or an attack. */
const MAX_CHUNKS = 100_000;
/** The 32-bit size that means "see the ds64 chunk" in RF64 and BW64 (EBU Tech 3306 §3; ITU-R BS.2088). */
const SIZE_IN_DS64 = 0xffffffff;

/** Reads a file's header region through a buffer, so a walk over many small chunks costs few reads. */
class Walker {
  private readonly buf = new Uint8Array(WALK_BUFFER_BYTES);
  private base = 0;
  private filled = 0;
  constructor(private readonly src: ByteSource) {}

  /**
   * Bytes `[offset, offset + length)` (length ≤ the buffer) as a view valid until the next call; shorter
   * where the file ends.
   */
  get(offset: number, length: number): Uint8Array {
    if (offset < this.base || offset + length > this.base + this.filled) {
      this.base = offset;
      this.filled = this.src.read(offset, this.buf);
    }
    const from = offset - this.base;
    return this.buf.subarray(from, Math.min(this.filled, from + length));
  }
}

function u32le(b: Uint8Array, at: number, le = true): number {
  return le
    ? (b[at] | (b[at + 1] << 8) | (b[at + 2] << 16) | (b[at + 3] << 24)) >>> 0
    : ((b[at] << 24) | (b[at + 1] << 16) | (b[at + 2] << 8) | b[at + 3]) >>> 0;
}

/** A 64-bit little-endian size from its two 32-bit halves (exact to 2^53). */
function u64le(b: Uint8Array, at: number): number {
  return u32le(b, at) + u32le(b, at + 4) * 2 ** 32;
}

/** True when four bytes look like a chunk id: printable ASCII (RIFF specification, 1991: a FOURCC). */
function plausibleId(b: Uint8Array): boolean {
  if (b.length < 4) return false;
  for (let i = 0; i < 4; i++) if (b[i] < 0x20 || b[i] > 0x7e) return false;
  return true;
}

/** The ds64 chunk of an RF64/BW64 file: 64-bit sizes (EBU Tech 3306 §3.2, ITU-R BS.2088 §5). */
interface Ds64 {
  readonly dataSize: number;
  readonly table: ReadonlyMap<string, number>;
}

/**
 * Walk the chunks, check the structure, and locate the `fmt ` information and the sample bytes.
 *
 * A chunk of odd size is followed by one pad byte (RIFF specification, 1991); some writers leave it out.
 * When the id after the pad byte is not a plausible FOURCC but the one without it is, the pad byte is taken
 * to be missing.
 */
function locate(src: ByteSource): WavLayout | WavError {
  const n = src.sizeBytes;
  const walk = new Walker(src);
  if (n === 0) return fail('empty', 'empty: the file is 0 bytes long');
  const head = walk.get(0, 12).slice();
  const magic = ascii(head, 0, 4);
  const sixtyFour = magic === 'RF64' || magic === 'BW64';
  if (magic !== 'RIFF' && magic !== 'RIFX' && !sixtyFour) {
    if (n < 4 && 'RIFF'.startsWith(magic) && isPrintable(magic)) {
      return fail('truncated', `truncated: the file ends after ${plural(n, 'byte')}, inside the RIFF header`);
    }
    return fail('not-wav', `not a WAV file: ${describeStart(head)}`);
  }
  if (n < 12) {
    return fail(
      'truncated',
      `truncated: the file ends after ${plural(n, 'byte')}, inside the 12-byte RIFF header`,
    );
  }
  const le = magic !== 'RIFX';
  const form = ascii(head, 8, 4);
  if (form !== 'WAVE') {
    return fail('not-wav', `not a WAV file: a RIFF file of type ${quoteId(head, 8, 4)} instead of 'WAVE'`);
  }
  let riffEnd = 8 + u32le(head, 4, le);

  let ds64: Ds64 | undefined;
  let fmt: FmtInfo | undefined;
  let data: { start: number; declared: number; present: number } | undefined;
  const seen: string[] = [];
  let chunkCount = 0;
  let off = 12;
  while (off + 8 <= n) {
    if (chunkCount >= MAX_CHUNKS) {
      return fail(
        'malformed',
        `malformed: more than ${MAX_CHUNKS} chunks before the audio (${seen.slice(0, MAX_LISTED_CHUNKS).join(', ')}, …)`,
      );
    }
    const h = walk.get(off, 8);
    let size = u32le(h, 4, le);
    const isData = h[0] === 0x64 && h[1] === 0x61 && h[2] === 0x74 && h[3] === 0x61; // 'data'
    const isFmt = h[0] === 0x66 && h[1] === 0x6d && h[2] === 0x74 && h[3] === 0x20; // 'fmt '
    const listing = seen.length < MAX_LISTED_CHUNKS || isData || isFmt || chunkCount === 0;
    const id = listing ? ascii(h, 0, 4) : '';
    const idQuoted = listing ? quoteId(h, 0, 4) : '';
    const body = off + 8;
    if (sixtyFour && chunkCount === 0) {
      if (id !== 'ds64') {
        return fail(
          'malformed',
          `malformed: a ${magic} file must start with a 'ds64' chunk; it starts with ${idQuoted}`,
        );
      }
      if (size < 28 || body + size > n) {
        return fail(
          'malformed',
          `malformed: the 'ds64' chunk is ${plural(size, 'byte')} long; it needs at least 28`,
        );
      }
      const b = walk.get(body, Math.min(size, WALK_BUFFER_BYTES)).slice();
      const table = new Map<string, number>();
      const entries = u32le(b, 24);
      for (let i = 0; i < entries && 28 + 12 * i + 12 <= b.length; i++) {
        table.set(ascii(b, 28 + 12 * i, 4), u64le(b, 28 + 12 * i + 4));
      }
      ds64 = { dataSize: u64le(b, 8), table };
      if (riffEnd - 8 === SIZE_IN_DS64) riffEnd = 8 + u64le(b, 0);
    }
    if (ds64 && size === SIZE_IN_DS64)
      size = isData ? ds64.dataSize : (ds64.table.get(ascii(h, 0, 4)) ?? size);
    chunkCount++;
    const present = Math.min(size, n - body);
    if (isData) {
      if (data) break; // a second data chunk: only the first is read (common practice, no source)
      data = { start: body, declared: size, present };
      if (present < size) break; // nothing can follow a short data chunk
    } else if (isFmt) {
      if (present < size) {
        return fail(
          'truncated',
          `truncated: the 'fmt ' chunk declares ${plural(size, 'byte')} but only ${present} are present`,
        );
      }
      if (!fmt) {
        const b = walk.get(body, Math.min(size, 64)).slice();
        const parsed = readFmt(new DataView(b.buffer), b, 0, size, le);
        if ('kind' in parsed) return parsed;
        fmt = parsed;
      }
    } else if (present < size) {
      // A damaged chunk after all the audio does not matter; one before it does.
      if (data && fmt) break;
      return fail(
        'truncated',
        `truncated: the file ends inside the ${quoteId(walk.get(off, 4).slice(), 0, 4)} chunk (it declares ${plural(size, 'byte')}, ` +
          `${present} are present), before the ${fmt ? "'data'" : "'fmt ' and 'data'"} chunk`,
      );
    }
    if (seen.length < MAX_LISTED_CHUNKS) seen.push(idQuoted);
    if (data && fmt) break;
    off = body + size;
    if (size & 1) {
      // The pad byte: skip it unless the writer left it out (the next id only fits without it).
      const padded = walk.get(off + 1, 4);
      const padMissing = !plausibleId(padded) && plausibleId(walk.get(off, 4));
      if (!padMissing) off += 1;
    }
  }

  if (sixtyFour && !ds64) {
    return fail(
      'truncated',
      `truncated: the ${magic} file ends after ${plural(n, 'byte')}, before its 'ds64' chunk`,
    );
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
    const listed =
      chunkCount > MAX_LISTED_CHUNKS
        ? `${seen.slice(0, MAX_LISTED_CHUNKS).join(', ')}, … (${chunkCount} chunks in all)`
        : seen.join(', ');
    const found = seen.length > 0 ? `it holds ${listed}` : 'it holds no chunks';
    return fail('malformed', `malformed: no ${missing}; ${found}`);
  }

  const frameBytes = fmt.blockAlign;
  if (data.present < data.declared) {
    const seconds = (k: number): string => (Math.floor(k / frameBytes) / fmt.sampleRateHz).toFixed(3);
    const declaredText =
      data.declared === SIZE_IN_DS64
        ? 'the largest possible size (a recording that was never finished?)'
        : '';
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
  const float = fmt.formatTag === FORMAT_FLOAT;
  return {
    kind: 'ok',
    sampleRateHz: fmt.sampleRateHz,
    channelCount: fmt.channelCount,
    frameCount,
    bitDepth: fmt.bitsPerSample,
    format: float ? 'float' : 'pcm',
    extensible: fmt.extensible,
    durationSeconds: frameCount / fmt.sampleRateHz,
    container: magic as WavLayout['container'],
    dataOffset: data.start,
    frameBytes,
    littleEndian: le,
  };
}

/**
 * Reads the header of a WAV file and says where its samples lie, without reading them: the first step of
 * reading a recording of any length. Reads RIFF/WAVE (IBM & Microsoft, "Multimedia Programming Interface
 * and Data Specifications 1.0", 1991), its big-endian form RIFX, and the 64-bit forms for files over 4 GB,
 * RF64 (EBU Tech 3306, 2009) and BW64 (ITU-R BS.2088), whose sizes come from the `ds64` chunk. Never
 * throws: every fault comes back as a {@link WavError}.
 *
 * @param src - The file (see {@link ByteSource}).
 * @returns The layout, or a typed error with a one-line message.
 * @example
 * openWav(bytesSource(file)) // { kind: 'ok', sampleRateHz: 48000, channelCount: 2, frameCount: 720000, dataOffset: 44, … }
 */
export function openWav(src: ByteSource): WavLayout | WavError {
  try {
    return locate(src);
  } catch (err) {
    const why = err instanceof Error ? err.message : String(err);
    return fail('decode-failed', `decode failed: ${why}`);
  }
}

/** Scale of an integer PCM sample of `bits` bits to ±1 full scale: 1 / 2^(bits−1) (exact in binary). */
function pcmScale(bits: number): number {
  return 1 / 2 ** (bits - 1);
}

/**
 * Converts whole frames of sample bytes to normalised floats: one channel, or all of them interleaved.
 * Integer PCM value v of b bits becomes v / 2^(b−1) (8-bit, unsigned, (v − 128) / 128); float samples pass
 * through unchanged.
 *
 * @param bytes - Sample bytes, a whole number of frames.
 * @param layout - The file's layout.
 * @param channel - Zero-based channel, or -1 for every channel interleaved.
 * @param out - Receives `frames` (or `frames × channelCount`) samples from index `at`.
 * @param at - First index written in `out`.
 */
export function decodeFrames(
  bytes: Uint8Array,
  layout: Pick<WavLayout, 'channelCount' | 'bitDepth' | 'format' | 'frameBytes' | 'littleEndian'>,
  channel: number,
  out: Float32Array,
  at = 0,
): number {
  const frames = Math.floor(bytes.length / layout.frameBytes);
  const cc = layout.channelCount;
  const bps = layout.bitDepth / 8;
  const stride = channel < 0 ? bps : layout.frameBytes;
  const first = channel < 0 ? 0 : channel * bps;
  const count = channel < 0 ? frames * cc : frames;
  const v = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const le = layout.littleEndian;
  const float = layout.format === 'float';
  let p = first;
  if (float && bps === 4) {
    for (let i = 0; i < count; i++, p += stride) out[at + i] = v.getFloat32(p, le);
  } else if (float) {
    for (let i = 0; i < count; i++, p += stride) out[at + i] = v.getFloat64(p, le);
  } else if (bps === 2) {
    const s = pcmScale(16);
    for (let i = 0; i < count; i++, p += stride) out[at + i] = v.getInt16(p, le) * s;
  } else if (bps === 3) {
    const s = pcmScale(24);
    for (let i = 0; i < count; i++, p += stride) {
      const x = le
        ? bytes[p] | (bytes[p + 1] << 8) | (bytes[p + 2] << 16)
        : (bytes[p] << 16) | (bytes[p + 1] << 8) | bytes[p + 2];
      out[at + i] = ((x << 8) >> 8) * s;
    }
  } else if (bps === 4) {
    const s = pcmScale(32);
    for (let i = 0; i < count; i++, p += stride) out[at + i] = v.getInt32(p, le) * s;
  } else {
    for (let i = 0; i < count; i++, p += stride) out[at + i] = (bytes[p] - 128) / 128;
  }
  return count;
}

/**
 * Reads and decodes frames `[startFrame, startFrame + frameCount)` of a file (clipped to the file's
 * frames), one channel or all interleaved, into `out`.
 *
 * @param src - The file.
 * @param layout - Its layout from {@link openWav}.
 * @param startFrame - First frame, ≥ 0.
 * @param frameCount - Frames wanted, ≥ 0.
 * @param channel - Zero-based channel, or -1 for all channels interleaved.
 * @param out - Receives the samples; long enough for them.
 * @param scratch - Optional byte buffer of at least `frameCount × frameBytes` bytes, reused between calls.
 * @returns Frames read (fewer than asked only at the end of the audio, or where the file is cut short).
 * @throws RangeError when `out` or `scratch` is too small.
 * @example readWavFrames(src, layout, 48000, 4800, 0, new Float32Array(4800)) // 4800: 0.1 s from the 1 s mark
 */
export function readWavFrames(
  src: ByteSource,
  layout: WavLayout,
  startFrame: number,
  frameCount: number,
  channel: number,
  out: Float32Array,
  scratch?: Uint8Array,
): number {
  const frames = Math.max(0, Math.min(frameCount, layout.frameCount - startFrame));
  const need = frames * (channel < 0 ? layout.channelCount : 1);
  if (out.length < need) {
    throw new RangeError(`out must hold at least ${need} samples, got ${out.length}`);
  }
  const bytesWanted = frames * layout.frameBytes;
  if (scratch && scratch.length < bytesWanted) {
    throw new RangeError(`scratch must hold at least ${bytesWanted} bytes, got ${scratch.length}`);
  }
  const buf = scratch ? scratch.subarray(0, bytesWanted) : new Uint8Array(bytesWanted);
  const got = src.read(layout.dataOffset + startFrame * layout.frameBytes, buf);
  const whole = Math.floor(got / layout.frameBytes);
  decodeFrames(buf.subarray(0, whole * layout.frameBytes), layout, channel, out);
  return whole;
}

/**
 * Decode the bytes of a WAV file into normalised Float32 channels.
 *
 * Reads uncompressed PCM (8-, 16-, 24- and 32-bit integer) and IEEE float (32- and 64-bit) samples, any
 * number of channels, little-endian `RIFF`, big-endian `RIFX`, or 64-bit `RF64`/`BW64`, plain or
 * WAVE_FORMAT_EXTENSIBLE headers, at 8000–384000 Hz. Chunks other than `fmt ` and `data` (`LIST`, `JUNK`,
 * `fact`, `bext`, `cue `, …) are skipped wherever they sit; bytes after the audio that do not form a chunk
 * are ignored; a missing pad byte after an odd-sized chunk is tolerated. A trailing partial frame is
 * dropped. Never throws: every fault comes back as a {@link WavError}. For long files, read the layout
 * with {@link openWav} and the samples a stretch at a time with {@link readWavFrames} instead.
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
    const layout = openWav(bytesSource(bytes));
    if (layout.kind === 'error') return layout;
    const sampleBytes = bytes.subarray(
      layout.dataOffset,
      layout.dataOffset + layout.frameCount * layout.frameBytes,
    );
    const channels: Float32Array[] = [];
    for (let c = 0; c < layout.channelCount; c++) {
      const ch = new Float32Array(layout.frameCount);
      decodeFrames(sampleBytes, layout, c, ch);
      channels.push(ch);
    }
    return {
      kind: 'ok',
      sampleRateHz: layout.sampleRateHz,
      channelCount: layout.channelCount,
      frameCount: layout.frameCount,
      bitDepth: layout.bitDepth,
      format: layout.format,
      extensible: layout.extensible,
      durationSeconds: layout.durationSeconds,
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
