// "Open WAV…" in the app reads the File in slices in the worker (renderer/src/engine/wav-analysis.ts
// sliceByteSource, FileReaderSync in the worker): the same answer as the whole file in memory, bit for bit,
// with no read larger than a block. The reference is dsp/recording/recording.ts analyzeRecording on the samples, the
// analysis `spanmeter analyze` runs.
import { describe, expect, it } from 'vitest';
import { analyzeRecording } from '../dsp/recording/index.ts';
import { findDemoUnit, planSchedule, renderOscillator } from '../dsp/sim/index.ts';
import { EngineCore } from '../renderer/src/engine/core.ts';
import type { FromEngine } from '../renderer/src/engine/protocol.ts';
import { analyzeWavBytes, analyzeWavSource, sliceByteSource } from '../renderer/src/engine/wav-analysis.ts';
import { wavBytes } from './helpers/wav.ts';

const unit = findDemoUnit('ol3-0412')!;
const volts = [0, 1, 2];
const rec = renderOscillator({ ...unit.options, snrDb: 60 }, planSchedule(volts, { holdSeconds: 2.5 }));
const bytes = wavBytes([rec.samples, rec.samples.map((x) => -x)], rec.sampleRateHz, '32f');

describe('Open WAV reads the file in slices', () => {
  it('gives the same steps as analyzeRecording on the samples, and reads no slice over 1 MiB', () => {
    let largest = 0;
    let total = 0;
    const src = sliceByteSource(bytes.length, (a, b) => {
      largest = Math.max(largest, b - a);
      total += b - a;
      return bytes.slice(a, b);
    });
    const fractions: number[] = [];
    const out = analyzeWavSource(src, { points: volts, channel: 1 }, (f) => fractions.push(f));
    const ref = analyzeRecording(rec.samples, rec.sampleRateHz, { points: volts });
    if (out.kind !== 'ok' || ref.kind !== 'ok') throw new Error('expected both analyses to succeed');
    expect(out.analysis.steps.map((s) => s.hz)).toEqual(ref.steps.map((s) => s.hz));
    expect(largest).toBeLessThanOrEqual(1024 * 1024);
    expect(bytes.length).toBeGreaterThan(2 * 1024 * 1024);
    // Read about once for the live pass plus the steps' windows, not many times over.
    expect(total).toBeLessThan(2 * bytes.length);
    expect(fractions.at(-1)).toBe(1);
    expect(analyzeWavBytes(bytes, { points: volts, channel: 1 })).toEqual(out);
  });

  it('names a channel the file does not have', () => {
    const out = analyzeWavBytes(bytes, { points: volts, channel: 3 });
    expect(out.kind === 'error' && out.message).toBe(
      'no channel 3: the file has 2 channels, numbered 1 to 2',
    );
  });

  it('the engine reads a Blob through the host reader and never needs the bytes', () => {
    const messages: FromEngine[] = [];
    let reads = 0;
    const core = new EngineCore({
      post: (m) => void messages.push(m),
      nowMs: () => 0,
      readBlob: (_blob, a, b) => {
        reads++;
        return bytes.slice(a, b);
      },
    });
    const file = new Blob([new Uint8Array(bytes)]);
    core.handle({ type: 'wav-analyze', file, fileName: 'take.wav', request: { points: volts, channel: 2 } });
    const done = messages.find((m) => m.type === 'wav-done');
    if (done?.type !== 'wav-done' || done.outcome.kind !== 'ok') throw new Error('expected an analysis');
    expect(done.outcome.file.channelNumber).toBe(2);
    expect(done.outcome.analysis.steps).toHaveLength(3);
    expect(reads).toBeGreaterThan(3);
  });
});
