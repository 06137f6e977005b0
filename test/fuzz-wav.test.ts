// Reliability: the WAV reader under thousands of generated files. The files come from a small generator of
// RIFF structures with arbitrary fields (magic, sizes, chunk ids, `fmt ` fields, extensible headers, padding,
// trailing bytes, cuts), not only from random bytes. Every call must end in a decoded file or a typed error,
// without allocating in proportion to a size the file merely declares.
//
// Container layout: IBM & Microsoft, "Multimedia Programming Interface and Data Specifications 1.0" (1991):
// 'RIFF' (little-endian) or 'RIFX' (big-endian), a 32-bit size, 'WAVE', then chunks of a 4-character id, a
// 32-bit size and a body padded to an even length. WAVE_FORMAT_EXTENSIBLE (tag 0xFFFE, 40-byte `fmt `, a
// 22-byte extension whose sub-format GUID starts with the real format tag): Microsoft, "Multiple Channel
// Audio Data and WAVE Files" (from memory).
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import { decodeWav, MAX_SAMPLE_RATE_HZ, MIN_SAMPLE_RATE_HZ, type WavResult } from '../dsp/io/index.ts';
import { concatBytes } from './helpers/bytes.ts';

/** Allowed growth of heap + array buffers across one call, beyond 16 bytes per byte of file. */
const MEMORY_SLACK_BYTES = 32 * 1024 * 1024;

const CODES = ['not-wav', 'truncated', 'empty', 'malformed', 'unsupported-format', 'decode-failed'];

// ---------------------------------------------------------------------------------------------------------
// A RIFF structure, and the bytes it makes
// ---------------------------------------------------------------------------------------------------------

interface ChunkSpec {
  /** Four bytes. */
  readonly id: Uint8Array;
  readonly body: Uint8Array;
  /** Size written in the header; null writes the body's true length. */
  readonly declared: number | null;
  /** Whether an odd-sized body is followed by its pad byte (the specification asks for it). */
  readonly pad: boolean;
}

interface RiffSpec {
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

const ascii = (s: string): Uint8Array => Uint8Array.from(s, (c) => c.charCodeAt(0));

const concat = (parts: readonly Uint8Array[]): Uint8Array => concatBytes(...parts);

function u32(v: number, be: boolean): Uint8Array {
  const b = new Uint8Array(4);
  new DataView(b.buffer).setUint32(0, v >>> 0, !be);
  return b;
}

function buildRiff(spec: RiffSpec): Uint8Array {
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
const GUID_TAIL = [0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xaa, 0x00, 0x38, 0x9b, 0x71];

interface FmtFields {
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

function fmtBody(f: FmtFields, be: boolean): Uint8Array {
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

const u16 = fc.integer({ min: 0, max: 0xffff });
const u32Any = fc.integer({ min: 0, max: 0xffffffff });

/** Sizes a damaged or hostile header might declare: exact, near, odd, far beyond the file, the maximum. */
const declaredSize = (actual: number): fc.Arbitrary<number | null> =>
  fc.oneof(
    { weight: 30, arbitrary: fc.constant(null) },
    { weight: 2, arbitrary: fc.integer({ min: 0, max: actual + 16 }) },
    { weight: 1, arbitrary: fc.integer({ min: 0, max: 0x7fff }).map((n) => 2 * n + 1) },
    { weight: 2, arbitrary: fc.constantFrom(0xffffffff, 0xfffffffe, 0x80000000, 0x7fffffff, 4_000_000_000) },
    { weight: 1, arbitrary: u32Any },
  );

const sampleRateArb = fc.oneof(
  { weight: 6, arbitrary: fc.constantFrom(8000, 11025, 22050, 44100, 48000, 96000, 192000, 384000) },
  { weight: 2, arbitrary: fc.integer({ min: MIN_SAMPLE_RATE_HZ, max: MAX_SAMPLE_RATE_HZ }) },
  // Absurd rates: 0, 1 Hz, just outside the accepted range, the 32-bit maximum.
  { weight: 2, arbitrary: fc.constantFrom(0, 1, 7999, 384001, 768000, 0x7fffffff, 0xffffffff) },
  { weight: 1, arbitrary: u32Any },
);

const formatTagArb = fc.oneof(
  { weight: 6, arbitrary: fc.constantFrom(1, 3, 0xfffe) },
  { weight: 1, arbitrary: fc.constantFrom(0, 2, 6, 7, 0x11, 0x31, 0x50, 0x55) },
  { weight: 1, arbitrary: u16 },
);

const bitsArb = fc.oneof(
  { weight: 6, arbitrary: fc.constantFrom(8, 16, 24, 32, 64) },
  { weight: 1, arbitrary: fc.constantFrom(0, 1, 4, 12, 20, 48, 0xffff) },
  { weight: 1, arbitrary: u16 },
);

const channelsArb = fc.oneof(
  { weight: 6, arbitrary: fc.integer({ min: 1, max: 8 }) },
  // Zero channels, and counts no file of 100 bytes can fill.
  { weight: 2, arbitrary: fc.constantFrom(0, 255, 0xffff) },
  { weight: 1, arbitrary: u16 },
);

const anyFmtFieldsArb: fc.Arbitrary<FmtFields> = fc.record({
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
const coherentFmtFieldsArb: fc.Arbitrary<FmtFields> = fc
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

const fmtFieldsArb: fc.Arbitrary<FmtFields> = fc.oneof(
  { weight: 3, arbitrary: coherentFmtFieldsArb },
  { weight: 2, arbitrary: anyFmtFieldsArb },
);

const chunkIdArb = fc.oneof(
  fc.constantFrom('LIST', 'JUNK', 'fact', 'bext', 'cue ', 'PAD ', 'smpl', 'id3 ', 'data', 'fmt ').map(ascii),
  fc.uint8Array({ minLength: 4, maxLength: 4 }),
);

/** A LIST chunk holding an INFO list of text sub-chunks. */
const listBodyArb = fc
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

function withSize(id: Uint8Array, body: Uint8Array): fc.Arbitrary<ChunkSpec> {
  return fc
    .tuple(
      declaredSize(body.length),
      fc.oneof({ weight: 9, arbitrary: fc.constant(true) }, { weight: 1, arbitrary: fc.constant(false) }),
    )
    .map(([declared, pad]) => ({ id, body, declared, pad }));
}

const otherChunkArb: fc.Arbitrary<ChunkSpec> = fc.oneof(
  listBodyArb.chain((body) => withSize(ascii('LIST'), body)),
  fc.integer({ min: 0, max: 64 }).chain((n) => withSize(ascii('JUNK'), new Uint8Array(n))),
  fc.uint8Array({ minLength: 4, maxLength: 4 }).chain((b) => withSize(ascii('fact'), b)),
  fc.tuple(chunkIdArb, fc.uint8Array({ maxLength: 40 })).chain(([id, b]) => withSize(id, b)),
);

/** A `fmt ` chunk from arbitrary fields (and its declared size, sometimes wrong). */
const fmtChunkArb = (be: boolean): fc.Arbitrary<ChunkSpec> =>
  fmtFieldsArb.chain((f) => withSize(ascii('fmt '), fmtBody(f, be)));

/** A data chunk: random bytes, usually a small whole number of frames' worth. */
const dataChunkArb: fc.Arbitrary<ChunkSpec> = fc
  .oneof(fc.uint8Array({ maxLength: 16 }), fc.uint8Array({ minLength: 64, maxLength: 1024 }))
  .chain((b) => withSize(ascii('data'), b));

const magicArb = fc.oneof(
  { weight: 8, arbitrary: fc.constant(ascii('RIFF')) },
  { weight: 2, arbitrary: fc.constant(ascii('RIFX')) },
  {
    weight: 1,
    arbitrary: fc.constantFrom('RF64', 'BW64', 'riff', 'FORM', 'OggS', 'fLaC', 'ID3\u0004').map(ascii),
  },
  { weight: 1, arbitrary: fc.uint8Array({ minLength: 4, maxLength: 4 }) },
);

const riffSpecArb: fc.Arbitrary<RiffSpec> = fc.tuple(magicArb, fc.boolean()).chain(([magic, flipEndian]) => {
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

interface Tally {
  calls: number;
  worstMs: number;
  worstGrowth: number;
  codes: Record<string, number>;
}

const newTally = (): Tally => ({ calls: 0, worstMs: 0, worstGrowth: 0, codes: {} });

function used(): number {
  const m = process.memoryUsage();
  return m.heapUsed + m.arrayBuffers;
}

/**
 * Decodes once and checks what must hold for any input: no exception escapes (its time is reported, not asserted), the
 * memory it holds on to is bounded by the file's own size, and the result is one of the two typed shapes.
 */
function decodeChecked(bytes: Uint8Array, tally: Tally): WavResult {
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

function report(name: string, t: Tally): void {
  console.log(
    `[fuzz-wav] ${name}: ${t.calls} files, slowest ${t.worstMs.toFixed(2)} ms, ` +
      `largest memory growth ${(t.worstGrowth / 1024 / 1024).toFixed(2)} MiB, results ${JSON.stringify(t.codes)}`,
  );
}

// ---------------------------------------------------------------------------------------------------------
// A reference decoder for the files the valid generator writes, straight from the specification
// ---------------------------------------------------------------------------------------------------------

type SampleKind = { format: 'pcm'; bits: 8 | 16 | 24 | 32 } | { format: 'float'; bits: 32 | 64 };

/**
 * One sample as the specification defines it, normalised as `decodeWav` documents: 8-bit unsigned with 128
 * as zero, over 128; 16/24/32-bit two's complement over 2^(b−1); IEEE 754 floats as they are, as float32.
 */
function referenceSample(view: DataView, at: number, k: SampleKind, le: boolean): number {
  if (k.format === 'float')
    return Math.fround(k.bits === 32 ? view.getFloat32(at, le) : view.getFloat64(at, le));
  switch (k.bits) {
    case 8:
      return (view.getUint8(at) - 128) / 128;
    case 16:
      return view.getInt16(at, le) / 32768;
    case 24: {
      const b0 = view.getUint8(at);
      const b1 = view.getUint8(at + 1);
      const b2 = view.getUint8(at + 2);
      const u = le ? b0 | (b1 << 8) | (b2 << 16) : b2 | (b1 << 8) | (b0 << 16);
      return ((u << 8) >> 8) / 8388608;
    }
    case 32:
      return Math.fround(view.getInt32(at, le) / 2147483648);
  }
}

interface ValidSpec {
  readonly kind: SampleKind;
  readonly channels: number;
  readonly sampleRateHz: number;
  readonly frames: number;
  readonly extensible: boolean;
  readonly bigEndian: boolean;
  readonly before: readonly ChunkSpec[];
  readonly after: readonly ChunkSpec[];
  readonly samples: Uint8Array;
  /** Bytes of a trailing partial frame, dropped by the reader. */
  readonly partial: number;
}

const exactChunk = (id: string, body: Uint8Array): ChunkSpec => ({
  id: ascii(id),
  body,
  declared: null,
  pad: true,
});

const validExtraChunkArb: fc.Arbitrary<ChunkSpec> = fc.oneof(
  listBodyArb.map((b) => exactChunk('LIST', b)),
  fc.integer({ min: 0, max: 33 }).map((n) => exactChunk('JUNK', new Uint8Array(n))),
  fc.uint8Array({ minLength: 4, maxLength: 4 }).map((b) => exactChunk('fact', b)),
  fc.uint8Array({ maxLength: 9 }).map((b) => exactChunk('bext', b)), // odd sizes: a pad byte follows
);

const validSpecArb: fc.Arbitrary<ValidSpec> = fc
  .record({
    kind: fc.constantFrom<SampleKind>(
      { format: 'pcm', bits: 8 },
      { format: 'pcm', bits: 16 },
      { format: 'pcm', bits: 24 },
      { format: 'pcm', bits: 32 },
      { format: 'float', bits: 32 },
      { format: 'float', bits: 64 },
    ),
    channels: fc.integer({ min: 1, max: 8 }),
    sampleRateHz: fc.integer({ min: MIN_SAMPLE_RATE_HZ, max: MAX_SAMPLE_RATE_HZ }),
    frames: fc.integer({ min: 1, max: 96 }),
    extensible: fc.boolean(),
    bigEndian: fc.boolean(),
    before: fc.array(validExtraChunkArb, { maxLength: 3 }),
    after: fc.array(validExtraChunkArb, { maxLength: 3 }),
    partialFraction: fc.double({ min: 0, max: 0.999, noNaN: true }),
  })
  .chain((s) => {
    const frameBytes = (s.channels * s.kind.bits) / 8;
    const partial = Math.floor(s.partialFraction * frameBytes);
    return fc
      .uint8Array({ minLength: s.frames * frameBytes + partial, maxLength: s.frames * frameBytes + partial })
      .map((samples) => ({ ...s, samples, partial }));
  });

function buildValid(s: ValidSpec): Uint8Array {
  const fmt = fmtBody(
    {
      formatTag: s.extensible ? 0xfffe : s.kind.format === 'float' ? 3 : 1,
      channels: s.channels,
      sampleRateHz: s.sampleRateHz,
      blockAlign: null,
      bits: s.kind.bits,
      extension: s.extensible
        ? {
            cbSize: 22,
            validBits: s.kind.bits,
            channelMask: 0,
            subFormat: s.kind.format === 'float' ? 3 : 1,
            standardGuid: true,
          }
        : null,
      extra: new Uint8Array(0),
    },
    s.bigEndian,
  );
  return buildRiff({
    magic: ascii(s.bigEndian ? 'RIFX' : 'RIFF'),
    bigEndian: s.bigEndian,
    riffSize: null,
    form: ascii('WAVE'),
    chunks: [...s.before, exactChunk('fmt ', fmt), exactChunk('data', s.samples), ...s.after],
    trailing: new Uint8Array(0),
    cut: null,
  });
}

// ---------------------------------------------------------------------------------------------------------

describe('decodeWav under generated RIFF structures', () => {
  it('3000 arbitrary structures: a decoded file or a typed error, each in under 200 ms, memory bounded', () => {
    const tally = newTally();
    fc.assert(
      fc.property(riffSpecArb, (spec) => {
        decodeChecked(buildRiff(spec), tally);
      }),
      { numRuns: 3000, seed: 20310405 },
    );
    report('arbitrary structures', tally);
    // The generator must reach both outcomes and the main error kinds, or it is not testing much.
    expect(tally.codes.ok ?? 0).toBeGreaterThan(50);
    for (const code of ['truncated', 'malformed', 'unsupported-format', 'not-wav']) {
      expect(tally.codes[code] ?? 0, code).toBeGreaterThan(10);
    }
    // "should not happen" (dsp/io/wav.ts): the structural checks catch every fault before the sample decoder.
    expect(tally.codes['decode-failed'] ?? 0).toBe(0);
  });

  it('1000 valid files with extra chunks, padding and either byte order decode to the specified samples', () => {
    const tally = newTally();
    fc.assert(
      fc.property(validSpecArb, (s) => {
        const bytes = buildValid(s);
        const r = decodeChecked(bytes, tally);
        if (r.kind !== 'ok') throw new Error(`expected a decoded file, got ${r.code}: ${r.message}`);
        expect(r.channelCount).toBe(s.channels);
        expect(r.sampleRateHz).toBe(s.sampleRateHz);
        expect(r.frameCount).toBe(s.frames);
        expect(r.bitDepth).toBe(s.kind.bits);
        expect(r.format).toBe(s.kind.format);
        expect(r.extensible).toBe(s.extensible);
        const view = new DataView(s.samples.buffer, s.samples.byteOffset, s.samples.byteLength);
        const bytesPer = s.kind.bits / 8;
        for (let i = 0; i < s.frames; i++) {
          for (let c = 0; c < s.channels; c++) {
            const want = referenceSample(view, (i * s.channels + c) * bytesPer, s.kind, !s.bigEndian);
            const got = r.channels[c][i];
            if (!(Object.is(got, want) || (Number.isNaN(got) && Number.isNaN(want)))) {
              throw new Error(`frame ${i} channel ${c}: got ${got}, the specification gives ${want}`);
            }
          }
        }
      }),
      { numRuns: 1000, seed: 7 },
    );
    report('valid files', tally);
  });

  // One fault planted in an otherwise valid file, and the error code the fault calls for.
  interface Fault {
    readonly name: string;
    readonly code: string;
    readonly plant: (s: ValidSpec, b: Uint8Array) => Uint8Array;
  }
  const faults: Fault[] = [
    { name: 'wrong magic', code: 'not-wav', plant: (_s, b) => withBytes(b, 0, ascii('RIFZ')) },
    {
      name: 'a data chunk declared far beyond the file (4 GB)',
      code: 'truncated',
      plant: (s, b) => setDataSize(s, b, 0xffffffff),
    },
    {
      name: 'a data chunk declared 1 byte more than remains',
      code: 'truncated',
      plant: (s, b) => setDataSize(s, b, remainingAfterData(s, b) + 1),
    },
    { name: 'zero channels', code: 'malformed', plant: (s, b) => setFmtU16(s, b, 2, 0) },
    {
      name: 'an absurd sample rate (4 294 967 295 Hz)',
      code: 'unsupported-format',
      plant: (s, b) => setFmtU32(s, b, 4, 0xffffffff),
    },
    { name: 'a sample rate of 0 Hz', code: 'unsupported-format', plant: (s, b) => setFmtU32(s, b, 4, 0) },
    { name: 'a 12-bit depth', code: 'unsupported-format', plant: (s, b) => setFmtU16(s, b, 14, 12) },
    {
      name: 'a compressed format tag (A-law)',
      code: 'unsupported-format',
      plant: (s, b) => setFmtU16(s, b, s.extensible ? 24 : 0, 6),
    },
    {
      name: 'a block align that disagrees',
      code: 'malformed',
      plant: (s, b) => setFmtU16(s, b, 12, ((s.channels * s.kind.bits) / 8 + 1) & 0xffff),
    },
    { name: 'a cut inside the RIFF header', code: 'truncated', plant: (_s, b) => b.subarray(0, 9) },
  ];

  it.each(faults)('$name: error $code, never an exception', ({ code, plant }) => {
    const tally = newTally();
    fc.assert(
      fc.property(validSpecArb, (s) => {
        const r = decodeChecked(plant(s, buildValid(s)), tally);
        expect(r.kind === 'error' ? r.code : 'ok', r.kind === 'error' ? r.message : '').toBe(code);
      }),
      { numRuns: 150, seed: 11 },
    );
  });

  it('a 100-byte file declaring a 4 GB data chunk, 2000 times: no large allocation', () => {
    const file = buildRiff({
      magic: ascii('RIFF'),
      bigEndian: false,
      riffSize: 0xffffffff,
      form: ascii('WAVE'),
      chunks: [
        exactChunk(
          'fmt ',
          fmtBody(
            {
              formatTag: 1,
              channels: 2,
              sampleRateHz: 48000,
              blockAlign: null,
              bits: 16,
              extension: null,
              extra: new Uint8Array(0),
            },
            false,
          ),
        ),
        { id: ascii('data'), body: new Uint8Array(100 - 44), declared: 0xffffffff, pad: true },
      ],
      trailing: new Uint8Array(0),
      cut: null,
    });
    expect(file.length).toBe(100);
    const tally = newTally();
    // A forced collection before and after, so the figure is what the calls keep, not garbage awaiting
    // collection (V8's --expose-gc, switched on at run time).
    setFlagsFromString('--expose-gc');
    const gc = runInNewContext('gc') as () => void;
    gc();
    const start = process.memoryUsage();
    // Count outcomes inside the loop and assert once after it: an expect() per call keeps its own
    // bookkeeping on the heap, which is not the decoder's.
    let truncated = 0;
    for (let i = 0; i < 2000; i++) {
      const r = decodeChecked(file, tally);
      if (r.kind === 'error' && r.code === 'truncated') truncated++;
    }
    gc();
    const end = process.memoryUsage();
    const growth = end.heapUsed + end.arrayBuffers - (start.heapUsed + start.arrayBuffers);
    console.log(
      `[fuzz-wav] 4 GB declared in 100 bytes: ${tally.calls} calls, slowest ${tally.worstMs.toFixed(3)} ms, ` +
        `heap + buffers grew ${(growth / 1024 / 1024).toFixed(2)} MiB overall, rss ${(end.rss / 1024 / 1024).toFixed(0)} MiB`,
    );
    expect(truncated).toBe(2000);
    // A decoder that sized even one buffer from the declared 4 GB would fail outright or grow by gigabytes;
    // one that kept a private copy per call would grow by 2000 × its size. The bounds are loose (tens of
    // MiB) because both figures move by megabytes from run to run on their own: V8 keeps compiled code and
    // the tally on the heap, and Node releases array-buffer memory lazily after a collection (measured here:
    // 0–9 MiB of buffer "growth" across 2000 calls that keep nothing).
    expect(growth).toBeLessThan(64 * 1024 * 1024);
    expect(end.arrayBuffers - start.arrayBuffers).toBeLessThan(32 * 1024 * 1024);
  });
});

// Helpers that locate fields of a file written by buildValid.

function fmtOffset(s: ValidSpec, b: Uint8Array): number {
  return chunkOffset(s, b, 'fmt ') + 8;
}

function chunkOffset(s: ValidSpec, b: Uint8Array, id: string): number {
  const view = new DataView(b.buffer, b.byteOffset, b.byteLength);
  let off = 12;
  while (off + 8 <= b.length) {
    const here = String.fromCharCode(b[off], b[off + 1], b[off + 2], b[off + 3]);
    const size = view.getUint32(off + 4, !s.bigEndian);
    if (here === id) return off;
    off += 8 + size + (size & 1);
  }
  throw new Error(`no ${id} chunk`);
}

function withBytes(b: Uint8Array, at: number, bytes: Uint8Array): Uint8Array {
  const out = b.slice();
  out.set(bytes, at);
  return out;
}

function setFmtU16(s: ValidSpec, b: Uint8Array, field: number, v: number): Uint8Array {
  const out = b.slice();
  new DataView(out.buffer).setUint16(fmtOffset(s, out) + field, v, !s.bigEndian);
  return out;
}

function setFmtU32(s: ValidSpec, b: Uint8Array, field: number, v: number): Uint8Array {
  const out = b.slice();
  new DataView(out.buffer).setUint32(fmtOffset(s, out) + field, v, !s.bigEndian);
  return out;
}

function remainingAfterData(s: ValidSpec, b: Uint8Array): number {
  return b.length - (chunkOffset(s, b, 'data') + 8);
}

function setDataSize(s: ValidSpec, b: Uint8Array, v: number): Uint8Array {
  const out = b.slice();
  new DataView(out.buffer).setUint32(chunkOffset(s, out, 'data') + 4, v, !s.bigEndian);
  return out;
}
