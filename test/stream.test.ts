import { describe, expect, it } from 'vitest';
import { PitchTracker } from '../dsp/pitch/index.ts';
import type { PitchReading } from '../dsp/pitch/index.ts';
import { addNoise, centsError, tone, toFloat32 } from './signals.ts';

function feed(t: PitchTracker, x: Float32Array, block: number): PitchReading[] {
  const out: PitchReading[] = [];
  for (let i = 0; i < x.length; i += block) t.push(x.subarray(i, i + block), (r) => out.push(r));
  return out;
}

describe('streaming tracker', () => {
  it('emits readings at the configured rate whatever the block size', () => {
    const fs = 48000;
    const x = toFloat32(tone('saw', 440, fs, 2));
    for (const block of [1, 128, 1000, 4096]) {
      const t = new PitchTracker({ sampleRateHz: fs, readingsPerSecond: 20 });
      expect(feed(t, x, block)).toHaveLength(40);
    }
  });

  it.each([110, 440, 2093])('100 ms live readings of a %d Hz saw at 40 dB SNR stay within 0.1 cent', (f) => {
    const fs = 48000;
    const x = tone('saw', f, fs, 3);
    addNoise(x, 40, 77);
    const t = new PitchTracker({ sampleRateHz: fs });
    const rs = feed(t, toFloat32(x), 256).filter((r) => r.kind === 'ok');
    expect(rs.length).toBeGreaterThan(50);
    for (const r of rs) {
      if (r.kind !== 'ok') continue;
      // Until the first pitch is known the tracker looks at all it has (up to 1 s); from then on 100 ms.
      if (r.timeSeconds > 1.2) expect(r.windowSeconds).toBeLessThanOrEqual(0.11);
      expect(Math.abs(centsError(r.hz, f))).toBeLessThan(0.1);
    }
  });

  it('sizes the window to the pitch low down (10 cycles)', () => {
    const fs = 48000;
    const t = new PitchTracker({ sampleRateHz: fs });
    const rs = feed(t, toFloat32(tone('saw', 32.7032, fs, 2)), 512).filter((r) => r.kind === 'ok');
    const last = rs[rs.length - 1];
    expect(last.kind === 'ok' && last.windowSeconds).toBeCloseTo(10 / 32.7032, 2);
  });

  it('settled average of the last second reaches a hundredth of a cent', () => {
    const fs = 48000;
    const f = 261.6256;
    const x = tone('square', f, fs, 2);
    addNoise(x, 40, 3);
    const t = new PitchTracker({ sampleRateHz: fs });
    feed(t, toFloat32(x), 480);
    const r = t.averageOfLast(1);
    expect(r.kind).toBe('ok');
    if (r.kind === 'ok') expect(Math.abs(centsError(r.hz, f))).toBeLessThan(0.01);
    const span = t.averageOfSpan(0.5, 1.5);
    expect(span.kind === 'ok' && Math.abs(centsError(span.hz, f)) < 0.01).toBe(true);
    expect(t.averageOfSpan(10, 11)).toMatchObject({ kind: 'none', reason: 'warming-up' });
  });

  it('never throws on bad blocks and recovers after them', () => {
    const fs = 48000;
    const t = new PitchTracker({ sampleRateHz: fs });
    const bad = new Float32Array(4800);
    bad.fill(NaN, 0, 100);
    bad.fill(Infinity, 100, 200);
    bad.fill(1, 200, 4800); // DC, full scale
    const rs = feed(t, bad, 256);
    expect(rs.every((r) => r.kind === 'none')).toBe(true);
    const good = feed(t, toFloat32(tone('saw', 440, fs, 1.5)), 256);
    const last = good[good.length - 1];
    expect(last.kind === 'ok' && Math.abs(centsError(last.hz, 440)) < 0.1).toBe(true);
  });

  it('analyses the named channel of interleaved blocks', () => {
    const fs = 44100;
    const a = tone('saw', 200, fs, 1);
    const b = tone('saw', 300, fs, 1);
    const inter = new Float32Array(a.length * 2);
    for (let i = 0; i < a.length; i++) {
      inter[2 * i] = a[i];
      inter[2 * i + 1] = b[i];
    }
    const t = new PitchTracker({ sampleRateHz: fs, channelCount: 2, channel: 1 });
    const rs = feed(t, inter, 512);
    const last = rs[rs.length - 1];
    expect(last.kind === 'ok' && Math.abs(centsError(last.hz, 300)) < 0.1).toBe(true);
  });

  it('misuse throws a precise message', () => {
    expect(() => new PitchTracker({ sampleRateHz: 48000, readingsPerSecond: 0 })).toThrow(
      'readingsPerSecond must be from 1 to 100, got 0',
    );
    expect(() => new PitchTracker({ sampleRateHz: 48000, channelCount: 2, channel: 2 })).toThrow(
      'channel must be an integer from 0 to 1, got 2',
    );
  });

  it('allocates no new buffers per block after warm-up (heap stays flat)', () => {
    const fs = 48000;
    const t = new PitchTracker({ sampleRateHz: fs });
    const x = toFloat32(tone('saw', 440, fs, 1));
    for (let k = 0; k < 3; k++) feed(t, x, 128);
    // Each reading is a small object; what must not happen is per-block buffer allocation. 10 s of audio
    // at 128-sample blocks is 3750 blocks; a per-block Float32Array of the window would be ≥ 70 MB.
    const before = process.memoryUsage().heapUsed;
    let n = 0;
    for (let k = 0; k < 10; k++) {
      for (let i = 0; i < x.length; i += 128) n += t.push(x.subarray(i, i + 128));
    }
    const grown = process.memoryUsage().heapUsed - before;
    expect(n).toBe(200);
    expect(grown).toBeLessThan(30e6);
  });
});
