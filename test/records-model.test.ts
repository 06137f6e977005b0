// Model-based concurrency tests of both record stores (desktop files, browser IndexedDB); the model and
// the scenarios are in records-model-harness.ts.
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { browserAdapter, desktopAdapter, runScenario, scenarios } from './records-model-harness.ts';

// A few dozen scenarios here; test/long/records-model.test.ts runs many more.
describe.each([
  ['desktop store (files)', desktopAdapter, 10],
  ['browser store (IndexedDB)', browserAdapter, 40],
] as const)('%s under concurrent use', (_name, make, numRuns) => {
  it('always equals the model: no acknowledged run lost, no record dropped, stale edits refused', async () => {
    await fc.assert(
      fc.asyncProperty(scenarios, (batches) => runScenario(make, batches)),
      { numRuns },
    );
  });

  it('two saves at once from the same copy keep both runs', async () => {
    await runScenario(make, [
      [
        { kind: 'save', rec: 0, client: 0, notes: false },
        { kind: 'save', rec: 0, client: 0, notes: false },
      ],
    ]);
  });

  it('a delete racing a save: the record ends in the trash, the save refused or merged before it', async () => {
    for (let i = 0; i < 10; i++)
      await runScenario(make, [
        [
          { kind: 'save', rec: 0, client: 1, notes: false },
          { kind: 'delete', rec: 0 },
          { kind: 'save', rec: 0, client: 2, notes: true },
        ],
      ]);
  });

  it('autosaves landing out of order: the newest sequence number wins', async () => {
    const store = await make();
    try {
      const results = await Promise.all([5, 1, 4, 2, 3].map((s) => store.autosave({ s }, s)));
      expect(results.every((r) => r.ok)).toBe(true);
      const a = await store.loadAutosave();
      expect(a.ok && a.value.kind === 'found' && a.value.state).toEqual({ s: 5 });
    } finally {
      await store.close();
    }
  });
});
