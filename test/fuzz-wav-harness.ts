// The RIFF structure generator and the checks shared by the WAV reader's fuzz tests: the default lane
// (test/fuzz-wav.test.ts) and the long lane (test/long/fuzz-wav.test.ts).
//
// Container layout: IBM & Microsoft, "Multimedia Programming Interface and Data Specifications 1.0" (1991):
// 'RIFF' (little-endian) or 'RIFX' (big-endian), a 32-bit size, 'WAVE', then chunks of a 4-character id, a
// 32-bit size and a body padded to an even length. WAVE_FORMAT_EXTENSIBLE (tag 0xFFFE, 40-byte `fmt `, a
// 22-byte extension whose sub-format GUID starts with the real format tag): Microsoft, "Multiple Channel
// Audio Data and WAVE Files" (from memory).
import { expect } from 'vitest';
import fc from 'fast-check';
import { decodeWav, MAX_SAMPLE_RATE_HZ, MIN_SAMPLE_RATE_HZ, type WavResult } from '../dsp/io/index.ts';
import { concatBytes } from './helpers/bytes.ts';

/** Allowed growth of heap + array buffers across one call, beyond 16 bytes per byte of file. */
export const MEMORY_SLACK_BYTES = 32 * 1024 * 1024;

export const CODES = ['not-wav', 'truncated', 'empty', 'malformed', 'unsupported-format', 'decode-failed'];

// ---------------------------------------------------------------------------------------------------------
// A RIFF structure, and the bytes it makes
// ---------------------------------------------------------------------------------------------------------

export interface ChunkSpec {
  /** Four bytes. */
  readonly id: Uint8Array;
  readonly body: Uint8Array;
  /** Size written in the header; null writes the body's true length. */
  readonly declared: number | null;
  /** Whether an odd-sized body is followed by its pad byte (the specification asks for it). */
  readonly pad: boolean;
}

export interface RiffSpec {
  readonly magic: Uint8Array;
  readonly bigEndian: boolean;
  /** RIFF size field; null writes the true size. */
  readonly riffSize: number | null;
  readonly form: Uint8Array;
  readonly chunks: readonly ChunkSpec[];
  readonly trailing: Uint8Array;
  /** Cut the file to this fraction of its length (null: keep it whole). */
  readonly cut: number | null;
}

export const ascii = (s: string): Uint8Array => Uint8Array.from(s, (c) => c.charCodeAt(0));

export const concat = (parts: readonly Uint8Array[]): Uint8Array => concatBytes(...parts);

export function u32(v: number, be: boolean): Uint8Array {
  const b = new Uint8Array(4);
  new DataView(b.buffer).setUint32(0, v >>> 0, !be);
  return b;
}

export function buildRiff(spec: RiffSpec): Uint8Array {
  const be = spec.bigEndian;
  const chunks = spec.chunks.map((c) =>
    concat([
      c.id,
      u32(c.declared ?? c.body.length, be),
      c.body,
      c.pad && c.body.length % 2 === 1 ? new Uint8Array(1) : new Uint8Array(0),
    ]),
  );
  const body = concat([spec.form, ...chunks]);
  const file = concat([spec.magic, u32(spec.riffSize ?? body.length, be), body, spec.trailing]);
  return spec.cut === null ? file : file.subarray(0, Math.floor(spec.cut * file.length));
}

/** Bytes 2…15 of every KSDATAFORMAT_SUBTYPE GUID derived from a format tag (…-0000-0010-8000-00AA00389B71). */
export const GUID_TAIL = [0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xaa, 0x00, 0x38, 0x9b, 0x71];

export interface FmtFields {
  readonly formatTag: number;
  readonly channels: number;
  readonly sampleRateHz: number;
  /** null: channels × bits / 8, as the specification requires. */
  readonly blockAlign: number | null;
  readonly bits: number;
  /** For WAVE_FORMAT_EXTENSIBLE: the extension (cbSize, valid bits, channel mask, sub-format). */
  readonly extension: {
    readonly cbSize: number;
    readonly validBits: number;
    readonly channelMask: number;
    readonly subFormat: number;
    readonly standardGuid: boolean;
  } | null;
  /** Bytes appended after the fields (some writers add a cbSize of 0 to plain PCM). */
  readonly extra: Uint8Array;
}

export function fmtBody(f: FmtFields, be: boolean): Uint8Array {
  const size = f.extension ? 40 : 16;
  const b = new Uint8Array(size);
  const v = new DataView(b.buffer);
  const le = !be;
  const align = f.blockAlign ?? ((f.channels * f.bits) / 8) & 0xffff;
  v.setUint16(0, f.formatTag & 0xffff, le);
  v.setUint16(2, f.channels & 0xffff, le);
  v.setUint32(4, f.sampleRateHz >>> 0, le);
  v.setUint32(8, (f.sampleRateHz * align) >>> 0, le);
  v.setUint16(12, align & 0xffff, le);
  v.setUint16(14, f.bits & 0xffff, le);
  if (f.extension) {
    const x = f.extension;
    v.setUint16(16, x.cbSize & 0xffff, le);
    v.setUint16(18, x.validBits & 0xffff, le);
    v.setUint32(20, x.channelMask >>> 0, le);
    v.setUint16(24, x.subFormat & 0xffff, le);
    for (let i = 0; i < 14; i++) b[26 + i] = x.standardGuid ? GUID_TAIL[i] : (i * 37 + x.subFormat) & 0xff;
  }
  return concat([b, f.extra]);
}

// ---------------------------------------------------------------------------------------------------------
// Arbitraries
// ---------------------------------------------------------------------------------------------------------

export const u16 = fc.integer({ min: 0, max: 0xffff });
export const u32Any = fc.integer({ min: 0, max: 0xffffffff });

/** Sizes a damaged or hostile header might declare: exact, near, odd, far beyond the file, the maximum. */
export const declaredSize = (actual: number): fc.Arbitrary<number | null> =>
  fc.oneof(
    { weight: 30, arbitrary: fc.constant(null) },
    { weight: 2, arbitrary: fc.integer({ min: 0, max: actual + 16 }) },
    { weight: 1, arbitrary: fc.integer({ min: 0, max: 0x7fff }).map((n) => 2 * n + 1) },
    { weight: 2, arbitrary: fc.constantFrom(0xffffffff, 0xfffffffe, 0x80000000, 0x7fffffff, 4_000_000_000) },
    { weight: 1, arbitrary: u32Any },
  );

export const sampleRateArb = fc.oneof(
  { weight: 6, arbitrary: fc.constantFrom(8000, 11025, 22050, 44100, 48000, 96000, 192000, 384000) },
  { weight: 2, arbitrary: fc.integer({ min: MIN_SAMPLE_RATE_HZ, max: MAX_SAMPLE_RATE_HZ }) },
  // Absurd rates: 0, 1 Hz, just outside the accepted range, the 32-bit maximum.
  { weight: 2, arbitrary: fc.constantFrom(0, 1, 7999, 384001, 768000, 0x7fffffff, 0xffffffff) },
  { weight: 1, arbitrary: u32Any },
);

export const formatTagArb = fc.oneof(
  { weight: 6, arbitrary: fc.constantFrom(1, 3, 0xfffe) },
  { weight: 1, arbitrary: fc.constantFrom(0, 2, 6, 7, 0x11, 0x31, 0x50, 0x55) },
  { weight: 1, arbitrary: u16 },
);

export const bitsArb = fc.oneof(
  { weight: 6, arbitrary: fc.constantFrom(8, 16, 24, 32, 64) },
  { weight: 1, arbitrary: fc.constantFrom(0, 1, 4, 12, 20, 48, 0xffff) },
  { weight: 1, arbitrary: u16 },
);

export const channelsArb = fc.oneof(
  { weight: 6, arbitrary: fc.integer({ min: 1, max: 8 }) },
  // Zero channels, and counts no file of 100 bytes can fill.
  { weight: 2, arbitrary: fc.constantFrom(0, 255, 0xffff) },
  { weight: 1, arbitrary: u16 },
);

export const anyFmtFieldsArb: fc.Arbitrary<FmtFields> = fc.record({
  formatTag: formatTagArb,
  channels: channelsArb,
  sampleRateHz: sampleRateArb,
  blockAlign: fc.oneof({ weight: 6, arbitrary: fc.constant(null) }, { weight: 1, arbitrary: u16 }),
  bits: bitsArb,
  extension: fc.option(
    fc.record({
      cbSize: fc.oneof({ weight: 4, arbitrary: fc.constant(22) }, { weight: 1, arbitrary: u16 }),
      validBits: fc.oneof(
        { weight: 3, arbitrary: fc.constantFrom(8, 16, 20, 24, 32) },
        { weight: 1, arbitrary: u16 },
      ),
      channelMask: u32Any,
      subFormat: fc.oneof({ weight: 4, arbitrary: fc.constantFrom(1, 3) }, { weight: 1, arbitrary: u16 }),
      standardGuid: fc.boolean(),
    }),
    { freq: 3 },
  ),
  extra: fc.oneof(
    { weight: 6, arbitrary: fc.constant(new Uint8Array(0)) },
    { weight: 1, arbitrary: fc.uint8Array({ maxLength: 8 }) },
  ),
});

/** Fields a real writer would produce: a supported format with a consistent frame size. */
export const coherentFmtFieldsArb: fc.Arbitrary<FmtFields> = fc
  .record({
    kind: fc.constantFrom<[number, number]>([1, 8], [1, 16], [1, 24], [1, 32], [3, 32], [3, 64]),
    channels: fc.integer({ min: 1, max: 8 }),
    sampleRateHz: sampleRateArb,
    extensible: fc.boolean(),
  })
  .map(({ kind: [tag, bits], channels, sampleRateHz, extensible }) => ({
    formatTag: extensible ? 0xfffe : tag,
    channels,
    sampleRateHz,
    blockAlign: null,
    bits,
    extension: extensible
      ? { cbSize: 22, validBits: bits, channelMask: 0, subFormat: tag, standardGuid: true }
      : null,
    extra: new Uint8Array(0),
  }));

export const fmtFieldsArb: fc.Arbitrary<FmtFields> = fc.oneof(
  { weight: 3, arbitrary: coherentFmtFieldsArb },
  { weight: 2, arbitrary: anyFmtFieldsArb },
);

export const chunkIdArb = fc.oneof(
  fc.constantFrom('LIST', 'JUNK', 'fact', 'bext', 'cue ', 'PAD ', 'smpl', 'id3 ', 'data', 'fmt ').map(ascii),
  fc.uint8Array({ minLength: 4, maxLength: 4 }),
);

/** A LIST chunk holding an INFO list of text sub-chunks. */
export const listBodyArb = fc
  .array(fc.tuple(fc.constantFrom('INAM', 'ICMT', 'ISFT', 'IART'), fc.uint8Array({ maxLength: 24 })), {
    maxLength: 4,
  })
  .map((subs) =>
    concat([
      ascii('INFO'),
      ...subs.map(([id, text]) =>
        concat([
          ascii(id),
          u32(text.length, false),
          text,
          text.length % 2 ? new Uint8Array(1) : new Uint8Array(0),
        ]),
      ),
    ]),
  );

export function withSize(id: Uint8Array, body: Uint8Array): fc.Arbitrary<ChunkSpec> {
  return fc
    .tuple(
      declaredSize(body.length),
      fc.oneof({ weight: 9, arbitrary: fc.constant(true) }, { weight: 1, arbitrary: fc.constant(false) }),
    )
    .map(([declared, pad]) => ({ id, body, declared, pad }));
}

export const otherChunkArb: fc.Arbitrary<ChunkSpec> = fc.oneof(
  listBodyArb.chain((body) => withSize(ascii('LIST'), body)),
  fc.integer({ min: 0, max: 64 }).chain((n) => withSize(ascii('JUNK'), new Uint8Array(n))),
  fc.uint8Array({ minLength: 4, maxLength: 4 }).chain((b) => withSize(ascii('fact'), b)),
  fc.tuple(chunkIdArb, fc.uint8Array({ maxLength: 40 })).chain(([id, b]) => withSize(id, b)),
);

/** A `fmt ` chunk from arbitrary fields (and its declared size, sometimes wrong). */
export const fmtChunkArb = (be: boolean): fc.Arbitrary<ChunkSpec> =>
  fmtFieldsArb.chain((f) => withSize(ascii('fmt '), fmtBody(f, be)));

/** A data chunk: random bytes, usually a small whole number of frames' worth. */
export const dataChunkArb: fc.Arbitrary<ChunkSpec> = fc
  .oneof(fc.uint8Array({ maxLength: 16 }), fc.uint8Array({ minLength: 64, maxLength: 1024 }))
  .chain((b) => withSize(ascii('data'), b));

export const magicArb = fc.oneof(
  { weight: 8, arbitrary: fc.constant(ascii('RIFF')) },
  { weight: 2, arbitrary: fc.constant(ascii('RIFX')) },
  {
    weight: 1,
    arbitrary: fc.constantFrom('RF64', 'BW64', 'riff', 'FORM', 'OggS', 'fLaC', 'ID3\u0004').map(ascii),
  },
  { weight: 1, arbitrary: fc.uint8Array({ minLength: 4, maxLength: 4 }) },
);

export const riffSpecArb: fc.Arbitrary<RiffSpec> = fc
  .tuple(magicArb, fc.boolean())
  .chain(([magic, flipEndian]) => {
    const be = (String.fromCharCode(...magic) === 'RIFX') !== flipEndian; // sometimes the wrong byte order
    const chunk = fc.oneof(
      { weight: 3, arbitrary: fmtChunkArb(be) },
      { weight: 3, arbitrary: dataChunkArb },
      { weight: 2, arbitrary: otherChunkArb },
    );
    return fc.record({
      magic: fc.constant(magic),
      bigEndian: fc.constant(be),
      riffSize: fc.oneof({ weight: 6, arbitrary: fc.constant(null) }, { weight: 2, arbitrary: u32Any }),
      form: fc.oneof(
        { weight: 9, arbitrary: fc.constant(ascii('WAVE')) },
        { weight: 1, arbitrary: fc.constantFrom('AVI ', 'wave', 'WAV ').map(ascii) },
      ),
      // Mostly a plausible order (fmt, then data, with extras around), sometimes anything at all.
      chunks: fc.oneof(
        fc
          .tuple(
            fc.array(otherChunkArb, { maxLength: 2 }),
            fmtChunkArb(be),
            fc.array(otherChunkArb, { maxLength: 2 }),
            dataChunkArb,
            fc.array(otherChunkArb, { maxLength: 2 }),
          )
          .map(([a, f, b, d, c]) => [...a, f, ...b, d, ...c]),
        fc.array(chunk, { maxLength: 6 }),
      ),
      trailing: fc.oneof(
        { weight: 6, arbitrary: fc.constant(new Uint8Array(0)) },
        { weight: 1, arbitrary: fc.uint8Array({ maxLength: 16 }) },
      ),
      cut: fc.oneof(
        { weight: 6, arbitrary: fc.constant(null) },
        { weight: 1, arbitrary: fc.double({ min: 0, max: 1, noNaN: true }) },
      ),
    });
  });

// ---------------------------------------------------------------------------------------------------------
// Checks shared by every property
// ---------------------------------------------------------------------------------------------------------

export interface Tally {
  calls: number;
  worstMs: number;
  worstGrowth: number;
  codes: Record<string, number>;
}

export const newTally = (): Tally => ({ calls: 0, worstMs: 0, worstGrowth: 0, codes: {} });

export function used(): number {
  const m = process.memoryUsage();
  return m.heapUsed + m.arrayBuffers;
}

/**
 * Decodes once and checks what must hold for any input: no exception escapes (its time is reported, not asserted), the
 * memory it holds on to is bounded by the file's own size, and the result is one of the two typed shapes.
 */
export function decodeChecked(bytes: Uint8Array, tally: Tally): WavResult {
  const before = used();
  const t0 = performance.now();
  let r: WavResult;
  try {
    r = decodeWav(bytes);
  } catch (err) {
    throw new Error(`decodeWav threw on ${bytes.length} bytes: ${String(err)}`);
  }
  const ms = performance.now() - t0;
  const growth = used() - before;
  tally.calls++;
  tally.worstMs = Math.max(tally.worstMs, ms);
  tally.worstGrowth = Math.max(tally.worstGrowth, growth);
  const key = r.kind === 'ok' ? 'ok' : r.code;
  tally.codes[key] = (tally.codes[key] ?? 0) + 1;

  // Decoded samples are float32 (4 bytes) from samples of at least one byte, plus one canonical copy of the
  // file and the decoder's own working copies: 16 bytes per byte of file is a generous bound. A decoder that
  // trusted a declared 4 GB size would blow far past it.
  expect(growth, `decode of ${bytes.length} bytes held ${growth} more bytes`).toBeLessThan(
    16 * bytes.length + MEMORY_SLACK_BYTES,
  );
  if (r.kind === 'ok') {
    expect(r.channels).toHaveLength(r.channelCount);
    expect(r.frameCount).toBeGreaterThan(0);
    expect(r.sampleRateHz).toBeGreaterThanOrEqual(MIN_SAMPLE_RATE_HZ);
    expect(r.sampleRateHz).toBeLessThanOrEqual(MAX_SAMPLE_RATE_HZ);
    // Never more samples than bytes: each sample takes at least one byte of the file.
    expect(r.frameCount * r.channelCount).toBeLessThanOrEqual(bytes.length);
    for (const c of r.channels) expect(c.length).toBe(r.frameCount);
    expect(r.durationSeconds).toBeCloseTo(r.frameCount / r.sampleRateHz, 12);
  } else {
    expect(CODES).toContain(r.code);
    expect(typeof r.message).toBe('string');
    expect(r.message.length).toBeGreaterThan(0);
    expect(r.message, 'one line').not.toMatch(/[\n\r]/);
  }
  return r;
}

export function report(name: string, t: Tally): void {
  console.log(
    `[fuzz-wav] ${name}: ${t.calls} files, slowest ${t.worstMs.toFixed(2)} ms, ` +
      `largest memory growth ${(t.worstGrowth / 1024 / 1024).toFixed(2)} MiB, results ${JSON.stringify(t.codes)}`,
  );
}
