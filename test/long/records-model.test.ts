// The model-based concurrency test of both record stores (test/records-model-harness.ts) with many more
// scenarios than the default lane runs.
import fc from 'fast-check';
import { describe, it } from 'vitest';
import { browserAdapter, desktopAdapter, runScenario, scenarios } from '../records-model-harness.ts';

describe.each([
  ['desktop store (files)', desktopAdapter, 300],
  ['browser store (IndexedDB)', browserAdapter, 1000],
] as const)('%s under concurrent use, long', (_name, make, numRuns) => {
  it('always equals the model', async () => {
    await fc.assert(
      fc.asyncProperty(scenarios, (batches) => runScenario(make, batches)),
      { numRuns },
    );
  });
});
