// Reading WAV files a stretch at a time (dsp/io/wav.ts openWav/readWavFrames): the same samples as the
// whole-file decoder and as the `wavefile` package (an outside, general-purpose WAV library), RF64/BW64 64-bit
// sizes (EBU Tech 3306; ITU-R BS.2088), files over 4 GB through a synthetic source, a missing pad byte
// (RIFF specification, IBM & Microsoft 1991: odd chunks are padded; some writers omit it), and chunk
// floods.
import { describe, expect, it } from 'vitest';
import wavefile from 'wavefile';
import { wavBytes, type WavDepth } from './helpers/wav.ts';
import {
  bytesSource,
  decodeWav,
  openWav,
  readWavFrames,
  type ByteSource,
  type WavLayout,
} from '../dsp/io/index.ts';
import { concatBytes, latin1, u32le, u64le } from './helpers/bytes.ts';

const enc = latin1;
const u32 = u32le;
const u64 = u64le;
const concat = concatBytes;
function fmt16(channels: number, rate: number, bits: number, tag = 1): Uint8Array {
  const b = new Uint8Array(16);
  const v = new DataView(b.buffer);
  const align = (channels * bits) / 8;
  v.setUint16(0, tag, true);
  v.setUint16(2, channels, true);
  v.setUint32(4, rate, true);
  v.setUint32(8, rate * align, true);
  v.setUint16(12, align, true);
  v.setUint16(14, bits, true);
  return b;
}
function chunk(id: string, body: Uint8Array, declared = body.length, pad = true): Uint8Array {
  return concat(enc(id), u32(declared), body, pad && body.length % 2 ? new Uint8Array(1) : new Uint8Array(0));
}
function int16(values: number[]): Uint8Array {
  const b = new Uint8Array(values.length * 2);
  values.forEach((x, i) => new DataView(b.buffer).setInt16(2 * i, x, true));
  return b;
}

/**
 * A file written by wavefile (through the shared writer, test/helpers/wav.ts, which uses the npm library as an
 * outside reference): `frames` frames of a two-tone test signal.
 */
function wavefileFile(bits: string, channels: number, frames: number): Uint8Array {
  const chans = Array.from({ length: channels }, (_, c) =>
    Float64Array.from(
      { length: frames },
      (_, i) => 0.6 * Math.sin(0.01 * i * (c + 1)) + 0.2 * Math.sin(0.37 * i),
    ),
  );
  return wavBytes(chans, 48000, bits as WavDepth);
}

function okLayout(r: ReturnType<typeof openWav>): WavLayout {
  if (r.kind !== 'ok') throw new Error(`expected a layout, got ${r.code}: ${r.message}`);
  return r;
}

describe('readWavFrames: any stretch decodes to the samples wavefile reads', () => {
  it.each([
    ['8', 1],
    ['16', 2],
    ['24', 2],
    ['32', 1],
    ['32f', 2],
  ])('%s-bit, %i channel(s)', (bits, channels) => {
    const bytes = wavefileFile(bits, channels, 5000);
    const ref = new wavefile.WaveFile(bytes);
    const whole = decodeWav(bytes);
    if (whole.kind !== 'ok') throw new Error(whole.message);
    const layout = okLayout(openWav(bytesSource(bytes)));
    const depth = bits.endsWith('f') ? 32 : Number(bits);
    const scale = bits.endsWith('f') ? 1 : depth === 8 ? 1 / 128 : 1 / 2 ** (depth - 1);
    const refCh = (c: number): Float64Array => {
      const s = ref.getSamples(false, Float64Array) as unknown as Float64Array | Float64Array[];
      return channels === 1 ? (s as Float64Array) : (s as Float64Array[])[c];
    };
    for (let c = 0; c < channels; c++) {
      const expected = Array.from(refCh(c), (v) => (depth === 8 ? (v - 128) * scale : v * scale));
      const out = new Float32Array(1234);
      for (let start = 0; start < 5000; start += 1234) {
        const n = readWavFrames(bytesSource(bytes), layout, start, 1234, c, out);
        expect(n).toBe(Math.min(1234, 5000 - start));
        for (let i = 0; i < n; i++) {
          expect(out[i]).toBe(Math.fround(expected[start + i]));
          expect(out[i]).toBe(whole.channels[c][start + i]);
        }
      }
    }
  });

  it('reads all channels interleaved', () => {
    const bytes = wavefileFile('16', 2, 100);
    const layout = okLayout(openWav(bytesSource(bytes)));
    const whole = decodeWav(bytes);
    if (whole.kind !== 'ok') throw new Error(whole.message);
    const out = new Float32Array(200);
    expect(readWavFrames(bytesSource(bytes), layout, 0, 100, -1, out)).toBe(100);
    expect(out[2 * 37]).toBe(whole.channels[0][37]);
    expect(out[2 * 37 + 1]).toBe(whole.channels[1][37]);
  });
});

/** An RF64 or BW64 file (EBU Tech 3306 §3; ITU-R BS.2088 §5): ds64 first, 32-bit sizes 0xFFFFFFFF. */
function rf64(magic: 'RF64' | 'BW64', samples: Uint8Array, extra: Uint8Array[] = []): Uint8Array {
  const fmt = chunk('fmt ', fmt16(1, 48000, 16));
  const dataHead = concat(enc('data'), u32(0xffffffff));
  const body = concat(...extra, fmt, dataHead, samples);
  const ds64Body = concat(u64(4 + 36 + body.length), u64(samples.length), u64(samples.length / 2), u32(0));
  return concat(enc(magic), u32(0xffffffff), enc('WAVE'), chunk('ds64', ds64Body), body);
}

describe('RF64 and BW64', () => {
  const values = [100, -200, 300, -400, 500, -600];
  it.each(['RF64', 'BW64'] as const)('%s: sizes come from the ds64 chunk', (magic) => {
    const d = decodeWav(rf64(magic, int16(values)));
    if (d.kind !== 'ok') throw new Error(d.message);
    expect(d.frameCount).toBe(6);
    expect(Array.from(d.channels[0])).toEqual(values.map((v) => v / 32768));
    const layout = okLayout(openWav(bytesSource(rf64(magic, int16(values)))));
    expect(layout.container).toBe(magic);
  });

  it('a file that does not start with ds64 is named', () => {
    const bad = concat(enc('RF64'), u32(0xffffffff), enc('WAVE'), chunk('fmt ', fmt16(1, 48000, 16)));
    const r = openWav(bytesSource(bad));
    expect(r.kind === 'error' && r.message).toBe(
      "malformed: a RF64 file must start with a 'ds64' chunk; it starts with 'fmt '",
    );
  });

  it('a file over 4 GB: a 5 GB data chunk, its last samples read by position', () => {
    // A synthetic source: the header of an RF64 file whose data chunk holds 5·10⁹ bytes of a 16-bit ramp
    // (sample k = k mod 32768), generated on request, so nothing of that size exists anywhere.
    const dataBytes = 5e9;
    const head = (() => {
      const fmt = chunk('fmt ', fmt16(1, 48000, 16));
      const ds64Body = concat(
        u64(4 + 36 + fmt.length + 8 + dataBytes),
        u64(dataBytes),
        u64(dataBytes / 2),
        u32(0),
      );
      return concat(
        enc('RF64'),
        u32(0xffffffff),
        enc('WAVE'),
        chunk('ds64', ds64Body),
        fmt,
        enc('data'),
        u32(0xffffffff),
      );
    })();
    const src: ByteSource = {
      sizeBytes: head.length + dataBytes,
      read(offset, into) {
        const n = Math.max(0, Math.min(into.length, this.sizeBytes - offset));
        for (let i = 0; i < n; i++) {
          const at = offset + i;
          if (at < head.length) into[i] = head[at];
          else {
            const k = Math.floor((at - head.length) / 2) % 32768;
            into[i] = (at - head.length) % 2 === 0 ? k & 0xff : k >> 8;
          }
        }
        return n;
      },
    };
    const layout = okLayout(openWav(src));
    expect(layout.frameCount).toBe(2.5e9);
    expect(layout.durationSeconds).toBeCloseTo(2.5e9 / 48000, 6);
    const out = new Float32Array(4);
    const start = layout.frameCount - 4;
    expect(readWavFrames(src, layout, start, 4, 0, out)).toBe(4);
    expect(Array.from(out)).toEqual([0, 1, 2, 3].map((i) => ((start + i) % 32768) / 32768));
  });
});

describe('chunk walking', () => {
  const fmt = chunk('fmt ', fmt16(1, 48000, 16));
  const data = chunk('data', int16([1000, -2000, 3000]));
  const riff = (...chunks: Uint8Array[]) => {
    const body = concat(enc('WAVE'), ...chunks);
    return concat(enc('RIFF'), u32(body.length), body);
  };

  it('an odd-sized chunk without its pad byte is read (RIFF 1991 asks for the pad; some writers omit it)', () => {
    const odd = chunk('xtra', Uint8Array.from([1, 2, 3]), 3, false);
    const d = decodeWav(riff(fmt, odd, data));
    if (d.kind !== 'ok') throw new Error(d.message);
    expect(Array.from(d.channels[0])).toEqual([1000 / 32768, -2000 / 32768, 3000 / 32768]);
  });

  it('an odd-sized chunk with its pad byte still reads', () => {
    const d = decodeWav(riff(fmt, chunk('xtra', Uint8Array.from([1, 2, 3])), data));
    expect(d.kind).toBe('ok');
  });

  it('16 MB of empty chunks: one short line, quickly', () => {
    const empties = new Uint8Array(16 * 1024 * 1024);
    for (let i = 0; i < empties.length; i += 8) empties.set(enc('JUNK'), i);
    const r = decodeWav(riff(empties));
    expect(r.kind === 'error' && r.code).toBe('malformed');
    const message = r.kind === 'error' ? r.message : '';
    expect(message.length).toBeLessThan(200);
    expect(message).toBe(
      "malformed: more than 100000 chunks before the audio ('JUNK', 'JUNK', 'JUNK', 'JUNK', 'JUNK', 'JUNK', 'JUNK', 'JUNK', …)",
    );
  });

  it('a few empty chunks are listed, then counted', () => {
    const empties = Array.from({ length: 20 }, () => chunk('JUNK', new Uint8Array(0)));
    const r = decodeWav(riff(...empties));
    expect(r.kind === 'error' && r.message).toBe(
      "malformed: no 'fmt ' and 'data' chunks; it holds 'JUNK', 'JUNK', 'JUNK', 'JUNK', 'JUNK', 'JUNK', 'JUNK', 'JUNK', … (20 chunks in all)",
    );
  });

  it('reads the header through few reads, whatever the chunk count', () => {
    let reads = 0;
    const bytes = riff(...Array.from({ length: 5000 }, () => chunk('JUNK', new Uint8Array(0))), fmt, data);
    const inner = bytesSource(bytes);
    const counted: ByteSource = {
      sizeBytes: inner.sizeBytes,
      read(offset, into) {
        reads++;
        return inner.read(offset, into);
      },
    };
    expect(openWav(counted).kind).toBe('ok');
    expect(reads).toBeLessThan(10);
  });
});
