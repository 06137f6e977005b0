// The rules of the unit book in the desktop store, and a backup taken from it restored into the browser
// store (the same file format on both sides). Rules from issue 10; common practice, no source.
import 'fake-indexeddb/auto';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { IDBFactory } from 'fake-indexeddb';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { createRecordsStore, type RecordsStore } from '../main/records-store.ts';
import { browserStore } from '../renderer/src/storage/store.ts';
import { cliInProcess } from './cli-run.ts';
import { sampleDraft, sampleRun } from './main-fixtures.ts';

let dir: string;
let store: RecordsStore;
beforeEach(async () => {
  dir = await mkdtemp(path.join(tmpdir(), 'spanmeter-book-'));
  store = createRecordsStore({
    recordsDir: path.join(dir, 'records'),
    autosaveFile: path.join(dir, 'a.json'),
  });
});
afterEach(() => rm(dir, { recursive: true, force: true }));

const drift = (seq: number, n: number) => ({
  schemaVersion: 1 as const,
  id: 'drift-20310314t100000z-aaaa',
  startedAt: '2031-03-14T10:00:00.000Z',
  savedAt: '2031-03-14T10:05:00.000Z',
  seq,
  volts: 2,
  windowSeconds: 60,
  points: Array.from({ length: n }, (_, i) => [i, -i / 100] as [number, number]),
});

describe('the unit book', () => {
  it('refuses a stale edit with a clear message, merges a stale addition, never edits a run in place', async () => {
    const a = await store.save(sampleDraft({ unitName: 'Ostlund Lane VCO 1' }));
    const b = await store.save({ ...a, runs: [...a.runs, sampleRun('run-2', 'after')] });
    await expect(store.save({ ...a, notes: 'changed in a stale window' })).rejects.toMatchObject({
      code: 'conflict',
      message: expect.stringMatching(
        /changed elsewhere \(it is at revision 2, this copy was based on revision 1\).*notes/,
      ),
    });
    const merged = await store.save({ ...a, runs: [...a.runs, sampleRun('run-3', 'again')] });
    expect(merged.runs.map((r) => r.id)).toEqual([a.runs[0].id, 'run-2', 'run-3']);
    const edited = { ...b.runs[1], label: 'renamed' };
    await expect(store.save({ ...merged, runs: [merged.runs[0], edited] })).rejects.toMatchObject({
      code: 'conflict',
      message: expect.stringContaining('never edited in place'),
    });
  });

  it('moves runs and records to a trash and back; a save does not resurrect a trashed run', async () => {
    const a = await store.save(sampleDraft({ runs: [sampleRun('run-1'), sampleRun('run-2', 'after')] }));
    const t = await store.deleteRun(a.id, 'run-1');
    expect(t.runs.map((r) => r.id)).toEqual(['run-2']);
    expect(t.trash?.map((x) => x.run.id)).toEqual(['run-1']);
    const s = await store.save({ ...a, runs: [...a.runs, sampleRun('run-3')] }); // stale copy still holding run-1
    expect(s.runs.map((r) => r.id)).toEqual(['run-2', 'run-3']);
    expect((await store.restoreRun(a.id, 'run-1')).runs.map((r) => r.id)).toEqual([
      'run-2',
      'run-3',
      'run-1',
    ]);
    await store.delete(a.id);
    const listed = await store.list();
    expect(listed.records).toEqual([]);
    expect(listed.trashed?.map((r) => r.id)).toEqual([a.id]);
    await expect(store.save({ ...s, runs: [...s.runs, sampleRun('run-4')] })).rejects.toMatchObject({
      code: 'conflict',
    });
    expect((await store.undelete(a.id)).runs).toHaveLength(3);
  });

  it('keeps drift logs (a lower seq never replaces a higher one), backs them up, and restores into the browser', async () => {
    expect(await store.saveDriftLog(drift(5, 10))).toMatchObject({ stale: false });
    expect(await store.saveDriftLog(drift(3, 2))).toMatchObject({ stale: true });
    expect((await store.loadDriftLog('drift-20310314t100000z-aaaa')).points).toHaveLength(10);
    const rec = await store.save(sampleDraft({ unitName: 'Ostlund Lane VCO 3' }));
    await store.deleteRun(rec.id, rec.runs[0].id);
    const { text } = await store.backup();
    const browser = browserStore({ indexedDB: new IDBFactory(), download: () => undefined });
    const r = await browser.restoreBook({ policy: 'ask', file: { name: 'b.json', text } });
    expect(r).toMatchObject({ ok: true, value: { kind: 'restored', counts: { added: 1, driftLogs: 1 } } });
    const back = await browser.loadRecord(rec.id);
    expect(back.ok && back.value.trash?.map((x) => x.run.id)).toEqual([rec.runs[0].id]);
    const logs = await browser.listDriftLogs();
    expect(logs.ok && logs.value.map((l) => l.pointCount)).toEqual([10]);
  });
});

describe('spanmeter book', () => {
  it('backs up, refuses conflicts unless told, and never replaces a file', async () => {
    const a = await store.save(sampleDraft({ unitName: 'Ostlund Lane VCO 4' }));
    const out = path.join(dir, 'backup.json');
    const recordsDir = path.join(dir, 'records');
    expect((await cliInProcess('book', 'backup', '--dir', recordsDir, '--out', out)).code).toBe(0);
    const again = await cliInProcess('book', 'backup', '--dir', recordsDir, '--out', out);
    expect(again.code).toBe(1);
    expect(again.stderr).toMatch(/already exists; choose a new file name/);
    await store.save({ ...a, notes: 'changed after the backup' });
    const refused = await cliInProcess('book', 'restore', '--dir', recordsDir, '--in', out);
    expect(refused.code).toBe(1);
    expect(refused.stderr).toMatch(
      /differ from the book's; nothing was restored\. Run again with --on-conflict copy/,
    );
    expect((await store.list()).records).toHaveLength(1);
    const copied = await cliInProcess(
      'book',
      'restore',
      '--dir',
      recordsDir,
      '--in',
      out,
      '--on-conflict',
      'copy',
    );
    expect(copied.code).toBe(0);
    expect(copied.stdout).toContain('1 kept as copies');
    expect((await store.list()).records.map((r) => r.unitName).sort()).toEqual([
      'Ostlund Lane VCO 4',
      'Ostlund Lane VCO 4 (restored copy)',
    ]);
  }, 120_000);
});
