/**
 * Sub-audio pitches on the live path: the streaming tracker with `lowestHz` (dsp/pitch/stream.ts) follows
 * 2, 4 and 8.18 Hz tones over windows of at least ten cycles, on a decimated copy of the stream, and its
 * settled averages of such tones land within 0.05 cent of the generator's frequency.
 *
 * Truth is the generator's frequency (test/signals.ts, additive Fourier series). MIDI note 0 is
 * 440·2^(−69/12) = 8.1758 Hz (MIDI 1.0 Detailed Specification, note numbers with A4 = 69 at 440 Hz).
 */
import { describe, expect, it } from 'vitest';
import { PitchTracker, type PitchReading } from '../dsp/pitch/index.ts';
import { addNoise, centsError, tone, toFloat32, type Shape } from './signals.ts';

function feed(t: PitchTracker, x: Float32Array, block: number): PitchReading[] {
  const out: PitchReading[] = [];
  for (let i = 0; i < x.length; i += block) t.push(x.subarray(i, i + block), (r) => out.push(r));
  return out;
}

/** MIDI note 0 at A4 = 440 Hz (MIDI 1.0 specification: note 69 is A4). */
const MIDI_NOTE_0_HZ = 440 * Math.pow(2, -69 / 12);

describe('sub-audio tracking (lowestHz)', () => {
  it('MIDI note 0 is 8.18 Hz', () => {
    // MIDI 1.0 Detailed Specification: note number 69 is A4 (440 Hz), twelve notes an octave.
    expect(MIDI_NOTE_0_HZ).toBeCloseTo(8.1758, 4);
  });

  // Harmonics of the 8.18 Hz tones up to 6 kHz: above the decimated stream's Nyquist frequency (4 to
  // 8 kHz), so its filter's rejection of aliases is exercised; the lower tones keep 500 harmonics
  // (generating every harmonic up to 0.45·fs would only slow the test).
  describe.each([
    [2, 'saw', 48000],
    [2, 'sine', 48000],
    [4, 'triangle', 48000],
    [4, 'saw', 44100],
    [MIDI_NOTE_0_HZ, 'saw', 48000],
    [MIDI_NOTE_0_HZ, 'square', 96000],
  ] as [number, Shape, number][])('%f Hz %s at %d Hz', (hz, shape, fs) => {
    const seconds = 20 / hz + 2;
    const x = tone(shape, hz, fs, seconds, { phase: 0.7, maxHarmonicHz: hz > 8 ? 6000 : 500 * hz });
    addNoise(x, 40, 11);
    const t = new PitchTracker({ sampleRateHz: fs, lowestHz: 2 });
    const rs = feed(t, toFloat32(x), 480);

    it('live readings hold at least ten cycles and stay within 0.05 cent', () => {
      const ok = rs.filter((r): r is Extract<PitchReading, { kind: 'ok' }> => r.kind === 'ok');
      // From the moment the tracker has seen a full window of the lowest pitch, every reading has a pitch.
      const late = rs.filter((r) => r.timeSeconds > 10 / hz + 0.5);
      expect(late.length).toBeGreaterThan(20);
      expect(late.filter((r) => r.kind === 'ok').length).toBe(late.length);
      for (const r of ok) {
        expect(r.windowSeconds * r.hz).toBeGreaterThanOrEqual(0.9 * 10);
        expect(Math.abs(centsError(r.hz, hz)), `reading at ${r.timeSeconds} s: ${r.hz} Hz`).toBeLessThan(
          0.05,
        );
      }
    });

    it('a settled average of ten cycles is within 0.05 cent (target of the LFO range)', () => {
      const end = t.elapsedSeconds;
      const r = t.averageOfSpan(end - 10 / hz, end);
      expect(r.kind).toBe('ok');
      if (r.kind !== 'ok') return;
      expect(Math.abs(centsError(r.hz, hz))).toBeLessThan(0.05);
      expect(r.windowSeconds * hz).toBeGreaterThan(9.9);
      // The stated uncertainty is honest: the error lies within three stated σ (or a thousandth of a cent).
      expect(Math.abs(centsError(r.hz, hz))).toBeLessThan(Math.max(3 * r.uncertaintyCents, 0.001));
    });
  });

  it('follows a step from 2 Hz up into the audio range and back down to 4 Hz', () => {
    const fs = 48000;
    const parts = [
      tone('saw', 2, fs, 6, { maxHarmonicHz: 1000 }),
      tone('saw', 220, fs, 6, { maxHarmonicHz: 6000 }),
      tone('saw', 4, fs, 6, { maxHarmonicHz: 2000 }),
    ];
    const x = new Float64Array(parts.reduce((n, p) => n + p.length, 0));
    parts.forEach((p, i) => x.set(p, i * parts[0].length));
    const t = new PitchTracker({ sampleRateHz: fs, lowestHz: 2 });
    const rs = feed(t, toFloat32(x), 1024);
    // After a step, a sub-audio window (ten cycles, 5 s at 2 Hz) still holds the old pitch for a while:
    // the last half-second of each part must read its own pitch.
    for (const [hz, end] of [
      [2, 6],
      [220, 12],
      [4, 18],
    ]) {
      const late = rs.filter((r) => r.timeSeconds > end - 0.5 && r.timeSeconds <= end);
      expect(late).toHaveLength(10);
      for (const r of late) {
        expect(r.kind).toBe('ok');
        if (r.kind === 'ok')
          expect(Math.abs(centsError(r.hz, hz)), `${r.hz} Hz at ${r.timeSeconds} s`).toBeLessThan(0.05);
      }
    }
  });

  it('a dropped block inside a sub-audio window is fitted around and reported, not a bias', () => {
    const fs = 48000;
    const hz = 2;
    const x = toFloat32(tone('saw', hz, fs, 14, { phase: 0.4, maxHarmonicHz: 1000 }));
    // 20 ms lost at 11 s (an interface overrun): the samples after it come 20 ms of phase later. The window
    // measured below is the last five seconds (8.98 s to 13.98 s of the stream), so the break lies well inside
    // it, not at its edge, where the fit's margin may leave it out.
    const cut = 11 * fs;
    const lost = Math.round(0.02 * fs);
    const t = new PitchTracker({ sampleRateHz: fs, lowestHz: 2 });
    for (let i = 0; i < cut; i += 480) t.push(x.subarray(i, Math.min(i + 480, cut)));
    t.markBreak();
    for (let i = cut + lost; i < x.length; i += 480) t.push(x.subarray(i, Math.min(i + 480, x.length)));
    const end = t.elapsedSeconds;
    const r = t.averageOfSpan(end - 10 / hz, end);
    expect(r.kind).toBe('ok');
    if (r.kind !== 'ok') return;
    expect(r.breaks).toBe(1);
    // The dropout target of the issue: at most 0.01 cent off.
    expect(Math.abs(centsError(r.hz, hz))).toBeLessThan(0.01);
  });

  it('keeps its memory bounded whatever the input rate: the sub-audio side runs at 8 to 16 kHz', () => {
    for (const fs of [8000, 44100, 48000, 96000, 192000, 384000]) {
      const t = new PitchTracker({ sampleRateHz: fs, lowestHz: 2 });
      const low = (t as unknown as { low: { rateHz: number; ring: Float32Array } }).low;
      expect(low.rateHz).toBeGreaterThanOrEqual(8000);
      expect(low.rateHz).toBeLessThan(16000);
      // 12.5 s of history (2.5 × the 5 s window of 2 Hz) at the decimated rate.
      expect(low.ring.length).toBeLessThanOrEqual(12.5 * 16000);
    }
  });

  it('without lowestHz nothing changes: no decimated side', () => {
    const t = new PitchTracker({ sampleRateHz: 48000 });
    expect((t as unknown as { low: unknown }).low).toBeNull();
    expect(t.lowestHz).toBe(10);
  });

  it('refuses a lowestHz out of range with a message naming it', () => {
    expect(() => new PitchTracker({ sampleRateHz: 48000, lowestHz: 0.1 })).toThrow(
      'lowestHz must be from 0.5 to 20, got 0.1',
    );
  });
});
