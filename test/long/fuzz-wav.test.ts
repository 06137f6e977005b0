// Reliability, long lane: the WAV reader over 3000 generated RIFF structures. The default lane
// (test/fuzz-wav.test.ts) runs the same generator and seed over 600. Generator and checks: test/fuzz-wav-harness.ts.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { decodeChecked, newTally, report, riffSpecArb, buildRiff } from '../fuzz-wav-harness.ts';

describe('decodeWav under generated RIFF structures, long', () => {
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
});
