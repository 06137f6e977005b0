import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import wavefile from 'wavefile';
import { decodeWav, pickChannel, type WavDecoded, type WavResult } from '../dsp/io/index.ts';
import { concatBytes, latin1, u32le } from './helpers/bytes.ts';

// ---------------------------------------------------------------------------------------------------------
// Helpers: files written by the `wavefile` package (an outside, general-purpose WAV writer), and a tiny
// hand-built RIFF writer for layouts wavefile does not produce (odd chunks, damaged headers).
// ---------------------------------------------------------------------------------------------------------

type Depth = '8' | '16' | '24' | '32' | '32f' | '64';

/** Deterministic test samples in [−1, 1): a sine plus a slower sine, so every value differs. */
function testSignal(frames: number, channel: number): Float64Array {
  const out = new Float64Array(frames);
  for (let i = 0; i < frames; i++) {
    out[i] = 0.7 * Math.sin(0.05 * i + channel) + 0.25 * Math.sin(0.0031 * i * (channel + 1));
  }
  return out;
}

/** Integer code of a normalised sample for an integer bit depth, as wavefile expects it. */
function quantise(x: number, bits: number): number {
  const full = 2 ** (bits - 1);
  const q = Math.max(-full, Math.min(full - 1, Math.round(x * full)));
  return bits === 8 ? q + 128 : q; // 8-bit WAV is unsigned, zero at 128
}

function isFloat(depth: Depth): boolean {
  return depth === '32f' || depth === '64';
}

function bitsOf(depth: Depth): number {
  return parseInt(depth, 10);
}

/**
 * Write a file with wavefile; returns the file and the normalised samples it should decode to. Kept apart from
 * the shared writer (test/helpers/wav.ts) on purpose: it also writes RIFX and 64-bit float files and quantises
 * against 2^(bits−1), so the decoder's scaling is checked against the library's own reading.
 */
function writeWithWavefile(
  depth: Depth,
  channels: number,
  rate: number,
  frames: number,
  container: 'RIFF' | 'RIFX' = 'RIFF',
): { bytes: Uint8Array; expected: Float64Array[] } {
  const bits = bitsOf(depth);
  const expected: Float64Array[] = [];
  const coded: number[][] = [];
  for (let c = 0; c < channels; c++) {
    const x = testSignal(frames, c);
    if (isFloat(depth)) {
      // Float32 files hold float32 values; the decoder returns Float32 for 64-bit files too.
      expected.push(Float64Array.from(Float32Array.from(x)));
      coded.push(Array.from(x));
    } else {
      const q = Array.from(x, (v) => quantise(v, bits));
      coded.push(q);
      expected.push(Float64Array.from(q, (v) => (bits === 8 ? v - 128 : v) / 2 ** (bits - 1)));
    }
  }
  const wav = new wavefile.WaveFile();
  wav.fromScratch(channels, rate, depth, channels === 1 ? coded[0] : coded, { container });
  return { bytes: wav.toBuffer(), expected };
}

function expectOk(r: WavResult): WavDecoded {
  if (r.kind !== 'ok') throw new Error(`expected a decoded file, got ${r.code}: ${r.message}`);
  return r;
}

function expectError(r: WavResult, code: string): string {
  if (r.kind !== 'error') throw new Error(`expected error ${code}, got a decoded file`);
  expect(r.code, r.message).toBe(code);
  expect(r.message).not.toContain('\n');
  return r.message;
}

const enc = latin1;
const u32 = u32le;
const concat = concatBytes;

/** A chunk: id, size, body, and the pad byte that keeps odd-sized chunks even (RIFF specification, 1991). */
function chunk(id: string, body: Uint8Array, declaredSize = body.length): Uint8Array {
  return concat(enc(id), u32(declaredSize), body, body.length % 2 ? new Uint8Array(1) : new Uint8Array(0));
}

function riff(...chunks: Uint8Array[]): Uint8Array {
  const body = concat(enc('WAVE'), ...chunks);
  return concat(enc('RIFF'), u32(body.length), body);
}

/** A 16-byte PCM `fmt ` body. */
function fmtBody(
  tag: number,
  channels: number,
  rate: number,
  bits: number,
  blockAlign = (channels * bits) / 8,
) {
  const b = new Uint8Array(16);
  const v = new DataView(b.buffer);
  v.setUint16(0, tag, true);
  v.setUint16(2, channels, true);
  v.setUint32(4, rate, true);
  v.setUint32(8, rate * blockAlign, true);
  v.setUint16(12, blockAlign, true);
  v.setUint16(14, bits, true);
  return b;
}

/** A 40-byte WAVE_FORMAT_EXTENSIBLE `fmt ` body with sub-format tag `subTag` (Microsoft's KSDATAFORMAT GUIDs). */
function extensibleFmtBody(subTag: number, channels: number, rate: number, bits: number, validBits = bits) {
  const b = new Uint8Array(40);
  b.set(fmtBody(0xfffe, channels, rate, bits), 0);
  const v = new DataView(b.buffer);
  v.setUint16(16, 22, true); // cbSize
  v.setUint16(18, validBits, true);
  v.setUint32(20, (1 << channels) - 1, true); // channel mask
  // KSDATAFORMAT_SUBTYPE_xxx = {0000xxxx-0000-0010-8000-00AA00389B71}
  b.set([subTag & 0xff, subTag >> 8, 0, 0, 0, 0, 0x10, 0, 0x80, 0, 0, 0xaa, 0, 0x38, 0x9b, 0x71], 24);
  return b;
}

function int16Bytes(values: number[]): Uint8Array {
  const b = new Uint8Array(values.length * 2);
  const v = new DataView(b.buffer);
  values.forEach((x, i) => v.setInt16(2 * i, x, true));
  return b;
}

// ---------------------------------------------------------------------------------------------------------

describe('decodeWav: files written by wavefile read back to the same samples', () => {
  const cases: Array<[Depth, number, number]> = [];
  for (const depth of ['8', '16', '24', '32', '32f', '64'] as Depth[]) {
    for (const channels of [1, 2]) {
      for (const rate of [8000, 44100, 48000, 96000, 192000]) cases.push([depth, channels, rate]);
    }
  }

  describe.each(cases)('%s-bit, %i channel(s), %i Hz', (depth, channels, rate) => {
    it('decodes the header fields and every sample', () => {
      const frames = 777;
      const { bytes, expected } = writeWithWavefile(depth, channels, rate, frames);
      const d = expectOk(decodeWav(bytes));
      expect(d.sampleRateHz).toBe(rate);
      expect(d.channelCount).toBe(channels);
      expect(d.frameCount).toBe(frames);
      expect(d.bitDepth).toBe(bitsOf(depth));
      expect(d.format).toBe(isFloat(depth) ? 'float' : 'pcm');
      expect(d.extensible).toBe(false);
      expect(d.durationSeconds).toBeCloseTo(frames / rate, 12);
      expect(d.channels).toHaveLength(channels);
      for (let c = 0; c < channels; c++) {
        const got = d.channels[c];
        expect(got).toBeInstanceOf(Float32Array);
        expect(got).toHaveLength(frames);
        // Integer formats: the exact quantised value v / 2^(b−1), as float32 (within float32 rounding for
        // 32-bit integers, which carry more bits than a float32 mantissa).
        const tol = depth === '32' ? 2 ** -24 : 0;
        let worst = 0;
        for (let i = 0; i < frames; i++) worst = Math.max(worst, Math.abs(got[i] - expected[c][i]));
        expect(worst).toBeLessThanOrEqual(tol);
        // And within half a quantisation step of the continuous signal (common practice, no source).
        const x = testSignal(frames, c);
        const halfStep = isFloat(depth) ? 2 ** -24 : 2 ** -bitsOf(depth) + tol;
        let worstQ = 0;
        for (let i = 0; i < frames; i++) worstQ = Math.max(worstQ, Math.abs(got[i] - x[i]));
        expect(worstQ).toBeLessThanOrEqual(halfStep);
      }
    });
  });

  it.each(['16', '24', '32f'] as Depth[])('reads big-endian RIFX files (%s-bit)', (depth) => {
    const { bytes, expected } = writeWithWavefile(depth, 2, 48000, 300, 'RIFX');
    expect(String.fromCharCode(...bytes.subarray(0, 4))).toBe('RIFX');
    const d = expectOk(decodeWav(bytes));
    expect(Array.from(d.channels[1])).toEqual(Array.from(Float32Array.from(expected[1])));
  });

  describe.each([false, true])('6 channels, 24-bit (format tag set to WAVE_FORMAT_EXTENSIBLE: %s)', (ext) => {
    it('reads every channel', () => {
      // wavefile writes 3+ channels with a 40-byte extensible 'fmt ' chunk (sub-format GUID for PCM) but
      // leaves the format tag at 1; Microsoft's "Multiple Channel Audio Data and WAVE Files" asks for 0xFFFE.
      const { bytes, expected } = writeWithWavefile('24', 6, 48000, 500);
      const view = new DataView(bytes.buffer);
      expect(view.getUint32(16, true)).toBe(40);
      if (ext) view.setUint16(20, 0xfffe, true);
      const d = expectOk(decodeWav(bytes));
      expect(d.extensible).toBe(ext);
      expect(d.channelCount).toBe(6);
      for (let c = 0; c < 6; c++) {
        expect(Array.from(d.channels[c])).toEqual(Array.from(Float32Array.from(expected[c])));
      }
    });
  });
});

describe('decodeWav: sample values against the WAV specification', () => {
  // IBM & Microsoft, "Multimedia Programming Interface and Data Specifications 1.0" (1991): 16-bit samples
  // are signed two's complement, 8-bit samples unsigned with 128 as the midpoint.
  it('16-bit: 0x7FFF, 0x8000, 1 and 0 map to 32767/32768, −1, 1/32768 and 0', () => {
    const file = riff(
      chunk('fmt ', fmtBody(1, 1, 48000, 16)),
      chunk('data', int16Bytes([32767, -32768, 1, 0])),
    );
    const d = expectOk(decodeWav(file));
    expect(Array.from(d.channels[0])).toEqual([32767 / 32768, -1, 1 / 32768, 0]);
  });

  it('8-bit: 255, 0, 128 map to 127/128, −1, 0', () => {
    const file = riff(
      chunk('fmt ', fmtBody(1, 1, 8000, 8)),
      chunk('data', Uint8Array.from([255, 0, 128, 129])),
    );
    const d = expectOk(decodeWav(file));
    expect(Array.from(d.channels[0])).toEqual([127 / 128, -1, 0, 1 / 128]);
  });

  it('stereo frames interleave left then right', () => {
    const file = riff(
      chunk('fmt ', fmtBody(1, 2, 44100, 16)),
      chunk('data', int16Bytes([16384, -16384, 8192, -8192])),
    );
    const d = expectOk(decodeWav(file));
    expect(Array.from(d.channels[0])).toEqual([0.5, 0.25]);
    expect(Array.from(d.channels[1])).toEqual([-0.5, -0.25]);
  });

  it('24-bit: little-endian three-byte samples (0x7FFFFF is 8388607/8388608)', () => {
    const data = Uint8Array.from([0xff, 0xff, 0x7f, 0x00, 0x00, 0x80, 0x00, 0x00, 0x40]);
    const d = expectOk(decodeWav(riff(chunk('fmt ', fmtBody(1, 1, 96000, 24)), chunk('data', data))));
    expect(Array.from(d.channels[0])).toEqual([Math.fround(8388607 / 8388608), -1, 0.5]);
  });
});

describe('decodeWav: odd chunks and layouts', () => {
  const fmt = chunk('fmt ', fmtBody(1, 1, 48000, 16));
  const samples = [1000, -2000, 3000, -4000, 5000];
  const data = chunk('data', int16Bytes(samples));
  const expected = samples.map((s) => s / 32768);
  const list = chunk('LIST', concat(enc('INFO'), chunk('INAM', enc('bench unit 7\0'))));
  const junk = chunk('JUNK', new Uint8Array(28));
  const odd = chunk('xtra', Uint8Array.from([1, 2, 3])); // odd size: one pad byte follows

  it.each([
    ['JUNK and LIST before fmt', [junk, list, fmt, data]],
    ['LIST and an odd-sized chunk after data', [fmt, data, list, odd]],
    ['an odd-sized chunk between fmt and data', [fmt, odd, data]],
    ['a fact chunk', [fmt, chunk('fact', u32(5)), data]],
    ['data before fmt', [data, fmt]],
  ])('%s', (_name, chunks) => {
    const d = expectOk(decodeWav(riff(...chunks)));
    expect(Array.from(d.channels[0])).toEqual(expected);
  });

  it('ignores garbage bytes after the last chunk', () => {
    const d = expectOk(decodeWav(concat(riff(fmt, data), Uint8Array.from([7, 7, 7]))));
    expect(d.frameCount).toBe(5);
  });

  it('drops a trailing partial frame', () => {
    const file = riff(chunk('fmt ', fmtBody(1, 2, 48000, 16)), chunk('data', int16Bytes([1, 2, 3, 4, 5])));
    expect(expectOk(decodeWav(file)).frameCount).toBe(2);
  });

  it('reads WAVE_FORMAT_EXTENSIBLE 32-bit float (which wavefile alone would read as integers)', () => {
    const values = Float32Array.from([0.5, -0.25, 0.125, 1.5]);
    const body = new Uint8Array(values.buffer.slice(0));
    const d = expectOk(
      decodeWav(riff(chunk('fmt ', extensibleFmtBody(3, 1, 48000, 32)), chunk('data', body))),
    );
    expect(d.format).toBe('float');
    expect(d.extensible).toBe(true);
    expect(Array.from(d.channels[0])).toEqual([0.5, -0.25, 0.125, 1.5]);
  });

  it('reads WAVE_FORMAT_EXTENSIBLE 24-bit PCM with 20 valid bits (left-justified samples)', () => {
    const data = Uint8Array.from([0x00, 0x00, 0x40, 0x00, 0x00, 0xc0]);
    const d = expectOk(
      decodeWav(riff(chunk('fmt ', extensibleFmtBody(1, 1, 48000, 24, 20)), chunk('data', data))),
    );
    expect(Array.from(d.channels[0])).toEqual([0.5, -0.5]);
  });
});

describe('decodeWav: errors', () => {
  const good = writeWithWavefile('16', 1, 48000, 48000).bytes; // 96000 data bytes, data at offset 44

  it.each([
    [
      'an MP3 with an ID3 tag',
      enc('ID3\u0004\0\0\0\0'),
      "not a WAV file: it starts with 'ID3' (an MP3 file) instead of 'RIFF'",
    ],
    [
      'a FLAC file',
      enc('fLaC\0\0\0\u0022'),
      "not a WAV file: it starts with 'fLaC' (a FLAC file) instead of 'RIFF'",
    ],
    ['text', enc('hello, world'), "not a WAV file: it starts with 'hell' instead of 'RIFF'"],
    [
      'binary',
      Uint8Array.from([0, 1, 2, 250]),
      "not a WAV file: it starts with bytes 00 01 02 fa instead of 'RIFF'",
    ],
    [
      'a RIFF file of another type',
      concat(enc('RIFF'), u32(4), enc('AVI ')),
      "not a WAV file: a RIFF file of type 'AVI ' instead of 'WAVE'",
    ],
  ])('not a WAV: %s', (_name, bytes, message) => {
    expect(expectError(decodeWav(bytes), 'not-wav')).toBe(message);
  });

  it('truncated data chunk: says how much is there', () => {
    expect(expectError(decodeWav(good.subarray(0, 44 + 1200)), 'truncated')).toBe(
      'truncated: the data chunk declares 96000 bytes but only 1200 are present (0.013 s of 1.000 s)',
    );
  });

  it.each([1, 3, 4, 11, 12, 16, 20, 30, 36, 40, 43, 44, 45, 1000, 95999 + 44])(
    'truncated when cut to %i bytes',
    (n) => {
      expectError(decodeWav(good.slice(0, n)), 'truncated');
    },
  );

  it('a file of 0 bytes is empty', () => {
    expect(expectError(decodeWav(new Uint8Array(0)), 'empty')).toBe('empty: the file is 0 bytes long');
  });

  it('a header with a 0-byte data chunk is empty', () => {
    const file = riff(chunk('fmt ', fmtBody(1, 2, 48000, 24)), chunk('data', new Uint8Array(0)));
    expect(expectError(decodeWav(file), 'empty')).toBe('empty: the file holds no audio frames');
  });

  it('a data size left at 0 with samples after it hints at an unfinished recording', () => {
    const file = riff(chunk('fmt ', fmtBody(1, 1, 48000, 16)), chunk('data', int16Bytes([1, 2, 3]), 0));
    expect(expectError(decodeWav(file), 'empty')).toMatch(/declares 0 bytes though 6 follow it/);
  });

  it('zero channels', () => {
    const file = riff(chunk('fmt ', fmtBody(1, 0, 48000, 16, 0)), chunk('data', int16Bytes([1, 2])));
    expect(expectError(decodeWav(file), 'malformed')).toBe(
      "malformed: the 'fmt ' chunk declares zero channels",
    );
  });

  it('no fmt chunk', () => {
    const file = riff(chunk('LIST', enc('INFO')), chunk('data', int16Bytes([1, 2])));
    expect(expectError(decodeWav(file), 'malformed')).toBe(
      "malformed: no 'fmt ' chunk; it holds 'LIST', 'data'",
    );
  });

  it('no data chunk', () => {
    const file = riff(chunk('fmt ', fmtBody(1, 1, 48000, 16)));
    expect(expectError(decodeWav(file), 'malformed')).toBe("malformed: no 'data' chunk; it holds 'fmt '");
  });

  it('inconsistent block align', () => {
    const file = riff(chunk('fmt ', fmtBody(1, 2, 48000, 16, 2)), chunk('data', int16Bytes([1, 2])));
    expect(expectError(decodeWav(file), 'malformed')).toMatch(
      /block align\) of 2 bytes, but 2 channels of 16-bit/,
    );
  });

  it.each([
    [4000, 'unsupported sample rate: 4000 Hz; Spanmeter reads 8000–384000 Hz'],
    [768000, 'unsupported sample rate: 768000 Hz; Spanmeter reads 8000–384000 Hz'],
  ])('sample rate %i Hz is out of range', (rate, message) => {
    const file = riff(chunk('fmt ', fmtBody(1, 1, rate, 16)), chunk('data', int16Bytes([1, 2])));
    expect(expectError(decodeWav(file), 'unsupported-format')).toBe(message);
  });

  it('compressed audio (A-law, written by wavefile) is named', () => {
    const wav = new wavefile.WaveFile();
    wav.fromScratch(1, 8000, '16', [0, 1000, -1000, 0]);
    wav.toALaw();
    expect(expectError(decodeWav(wav.toBuffer()), 'unsupported-format')).toMatch(
      /^unsupported format: the samples are A-law-compressed \(format tag 0x0006\)/,
    );
  });

  it('odd bit depths are refused with the list of what is read', () => {
    const file = riff(chunk('fmt ', fmtBody(1, 1, 48000, 12, 2)), chunk('data', int16Bytes([1, 2])));
    expect(expectError(decodeWav(file), 'unsupported-format')).toBe(
      'unsupported format: 12-bit PCM samples; Spanmeter reads 8-, 16-, 24- and 32-bit PCM',
    );
  });

  it('an RF64 header with nothing after it is named as truncated (EBU Tech 3306: ds64 comes first)', () => {
    expect(expectError(decodeWav(concat(enc('RF64'), u32(0xffffffff), enc('WAVE'))), 'truncated')).toBe(
      "truncated: the RF64 file ends after 12 bytes, before its 'ds64' chunk",
    );
  });

  it('a chunk before the audio that runs past the end of the file', () => {
    const file = riff(chunk('fmt ', fmtBody(1, 1, 48000, 16)), chunk('LIST', enc('INFO'), 5000));
    expect(expectError(decodeWav(file), 'truncated')).toBe(
      "truncated: the file ends inside the 'LIST' chunk (it declares 5000 bytes, 4 are present), before the 'data' chunk",
    );
  });
});

describe('decodeWav never throws', () => {
  const valid = [
    writeWithWavefile('16', 2, 44100, 64).bytes,
    writeWithWavefile('24', 1, 48000, 64).bytes,
    writeWithWavefile('32f', 1, 96000, 64).bytes,
    writeWithWavefile('16', 4, 48000, 16).bytes, // extensible
  ];

  const check = (bytes: Uint8Array): boolean => {
    const r = decodeWav(bytes);
    if (r.kind === 'ok') return r.channels.length === r.channelCount && r.frameCount > 0;
    return typeof r.message === 'string' && r.message.length > 0 && !r.message.includes('\n');
  };

  it('on random bytes', () => {
    fc.assert(fc.property(fc.uint8Array({ maxLength: 300 }), check), { numRuns: 2000 });
  });

  it('on random bytes behind a valid RIFF/WAVE signature', () => {
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 300 }), (tail) =>
        check(concat(enc('RIFF'), u32(tail.length + 4), enc('WAVE'), tail)),
      ),
      { numRuns: 2000 },
    );
  });

  it('on valid files with bytes changed, cut or both', () => {
    fc.assert(
      fc.property(
        fc.constantFrom(...valid),
        fc.array(fc.tuple(fc.nat(), fc.integer({ min: 0, max: 255 })), { maxLength: 8 }),
        fc.option(fc.nat()),
        (file, edits, cut) => {
          const b = file.slice();
          // Bias the edits towards the header, where they matter most.
          for (const [pos, value] of edits) b[pos % Math.min(b.length, pos % 2 ? 80 : b.length)] = value;
          return check(cut === null ? b : b.subarray(0, cut % (b.length + 1)));
        },
      ),
      { numRuns: 3000 },
    );
  });
});

describe('pickChannel', () => {
  const d = expectOk(decodeWav(writeWithWavefile('16', 2, 48000, 10).bytes));

  it('numbers channels from 1', () => {
    const left = pickChannel(d, 1);
    const right = pickChannel(d, 2);
    expect(left.kind === 'ok' && left.samples).toBe(d.channels[0]);
    expect(right.kind === 'ok' && right.samples).toBe(d.channels[1]);
    expect(right.kind === 'ok' && right.channelNumber).toBe(2);
  });

  it('a channel the file does not have', () => {
    const r = pickChannel(d, 3);
    expect(r.kind === 'error' && r.code).toBe('no-such-channel');
    expect(r.kind === 'error' && r.message).toBe('no channel 3: the file has 2 channels, numbered 1 to 2');
    const mono = expectOk(decodeWav(writeWithWavefile('16', 1, 48000, 10).bytes));
    const m = pickChannel(mono, 2);
    expect(m.kind === 'error' && m.message).toBe('no channel 2: the file has only channel 1');
  });

  it.each([0, -1, 1.5, NaN])('channel number %s is misuse and throws', (n) => {
    expect(() => pickChannel(d, n)).toThrow(
      `channelNumber must be an integer ≥ 1 (channels are numbered from 1), got ${n}`,
    );
  });
});
