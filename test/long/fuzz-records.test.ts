// Reliability, long lane: the full search of parseRecordText (the pure check the records store uses) over
// 3000 mutated records. The default lane (test/fuzz-records.test.ts) runs the same generator and seed over
// 600. Generators and checks: test/fuzz-records-harness.ts (common practice, no source).
import fc from 'fast-check';
import { afterAll, describe, expect, it } from 'vitest';
import { checkParsed, mutatedRecordTextArb, slowest } from '../fuzz-records-harness.ts';

afterAll(() => console.log(`[fuzz-records, long] slowest call ${slowest.ms.toFixed(1)} ms: ${slowest.what}`));

describe('parseRecordText (the pure check the records store uses), long', () => {
  it('3000 mutated records: prototype keys, huge numbers, deep nesting, wrong types, control characters', () => {
    const tally: Record<string, number> = {};
    fc.assert(
      fc.property(mutatedRecordTextArb, (text) => {
        checkParsed(text, tally);
      }),
      { numRuns: 3000, seed: 1405 },
    );
    console.log(`[fuzz-records] mutated records: ${JSON.stringify(tally)}`);
    expect(tally.ok ?? 0).toBeGreaterThan(100); // some mutations are harmless: the valid path is exercised
    expect(tally.corrupt ?? 0).toBeGreaterThan(1000);
  }, 300_000); // thousands of full schema checks: minutes on a loaded machine, seconds on an idle one
});
