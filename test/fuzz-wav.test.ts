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
import { MAX_SAMPLE_RATE_HZ, MIN_SAMPLE_RATE_HZ } from '../dsp/io/index.ts';
import {
  type ChunkSpec,
  ascii,
  buildRiff,
  fmtBody,
  listBodyArb,
  riffSpecArb,
  newTally,
  decodeChecked,
  report,
} from './fuzz-wav-harness.ts';

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
  // The full 3000-file search runs in the long lane (test/long/fuzz-wav.test.ts); this is the same generator
  // and seed over 600 files, with the floors scaled to match (50 and 10 of 3000).
  it('600 arbitrary structures: a decoded file or a typed error, each in under 200 ms, memory bounded', () => {
    const tally = newTally();
    fc.assert(
      fc.property(riffSpecArb, (spec) => {
        decodeChecked(buildRiff(spec), tally);
      }),
      { numRuns: 600, seed: 20310405 },
    );
    report('arbitrary structures', tally);
    // The generator must reach both outcomes and the main error kinds, or it is not testing much.
    expect(tally.codes.ok ?? 0).toBeGreaterThan(10);
    for (const code of ['truncated', 'malformed', 'unsupported-format', 'not-wav']) {
      expect(tally.codes[code] ?? 0, code).toBeGreaterThan(2);
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
