/**
 * The browser record store: IndexedDB (fake-indexeddb here), the localStorage book it migrates (a fake), the same record schema the desktop app's main
 * process enforces (main/ipc-contract.ts), autosave round trips and downloads.
 */
import 'fake-indexeddb/auto';
import { IDBFactory } from 'fake-indexeddb';
import { describe, expect, it } from 'vitest';
import { calibrate } from '../dsp/calibration/index.ts';
import { slugify } from '../main/record-id.ts';
import { RECORD_SCHEMA_VERSION, UnitRecordSchema } from '../main/ipc-contract.ts';
import { recordIdProblem } from '../main/record-id.ts';
import { browserStore, STORAGE_KEYS, type KeyValueStorage } from '../renderer/src/storage/store.ts';
import { draftFromInfo, EMPTY_UNIT_INFO } from '../renderer/src/ui/RecordsPanel.tsx';

function fakeStorage(): KeyValueStorage & { map: Map<string, string> } {
  const map = new Map<string, string>();
  return {
    map,
    getItem: (k) => map.get(k) ?? null,
    setItem: (k, v) => void map.set(k, v),
    removeItem: (k) => void map.delete(k),
  };
}

function setup() {
  const storage = fakeStorage();
  const downloads: { name: string; mime: string; content: string }[] = [];
  let t = Date.parse('2026-03-01T10:00:00Z');
  let seed = 0.1;
  const store = browserStore({
    indexedDB: new IDBFactory(),
    legacy: storage,
    download: (name, mime, content) => downloads.push({ name, mime, content }),
    now: () => new Date((t += 1000)),
    random: () => (seed = (seed * 9301 + 0.49297) % 1),
  });
  return { storage, downloads, store };
}

const run = {
  id: 'run-1',
  takenAt: '2026-03-01T09:59:00.000Z',
  label: 'before',
  plan: { volts: [0, 1] },
  // The one result shape, from the one pipeline (dsp/calibration/pipeline.ts).
  result: calibrate([
    { index: 0, volts: 0, measuredVolts: null, rawHz: 32.66, uncertaintyCents: 0.001 },
    { index: 1, volts: 1, measuredVolts: null, rawHz: 65.4, uncertaintyCents: 0.001 },
  ]).result,
};

describe('browserStore', () => {
  it('saves a new record with a safe id, lists, loads and deletes it', async () => {
    const { store } = setup();
    const saved = await store.saveRecord({
      schemaVersion: RECORD_SCHEMA_VERSION,
      unitName: 'OL-3 no. 17',
      serial: 'OL3-0417',
      runs: [run],
    });
    expect(saved.ok).toBe(true);
    if (!saved.ok) return;
    expect(saved.value.id).toMatch(/^ol-3-no-17-[a-z0-9]{8}$/);
    expect(recordIdProblem(saved.value.id)).toBeNull();
    expect(UnitRecordSchema.safeParse(saved.value).success).toBe(true);
    const list = await store.listRecords();
    expect(list.ok && list.value.map((r) => [r.unitName, r.serial, r.runCount, r.lastRunAt])).toEqual([
      ['OL-3 no. 17', 'OL3-0417', 1, run.takenAt],
    ]);
    const loaded = await store.loadRecord(saved.value.id);
    expect(loaded.ok && loaded.value.runs[0].result.steps[1].hz).toBe(65.4);
    // Saving again keeps createdAt and moves updatedAt.
    const again = await store.saveRecord({
      ...saved.value,
      runs: [run, { ...run, id: 'run-2', label: 'after' }],
    });
    expect(again.ok && again.value.createdAt).toBe(saved.value.createdAt);
    expect(again.ok && again.value.updatedAt > saved.value.updatedAt).toBe(true);
    expect(again.ok && again.value.runs.map((r) => r.label)).toEqual(['before', 'after']);
    const del = await store.deleteRecord(saved.value.id);
    expect(del.ok).toBe(true);
    const gone = await store.loadRecord(saved.value.id);
    expect(gone.ok ? null : gone.error.code).toBe('not-found');
  });

  it('builds ids with the one slug the desktop store uses: "Crème VCO" is creme-vco', async () => {
    const { store } = setup();
    const saved = await store.saveRecord({
      schemaVersion: RECORD_SCHEMA_VERSION,
      unitName: 'Crème VCO',
      runs: [],
    });
    expect(saved.ok && saved.value.id).toMatch(/^creme-vco-[a-z0-9]{8}$/);
    expect(slugify('Crème VCO')).toBe('creme-vco');
  });

  it('refuses a record the schema refuses, naming the field', async () => {
    const { store } = setup();
    const r = await store.saveRecord({
      schemaVersion: RECORD_SCHEMA_VERSION,
      unitName: 'x',
      roomTempC: 200,
      runs: [],
    });
    expect(r.ok).toBe(false);
    if (!r.ok) {
      expect(r.error.code).toBe('invalid-payload');
      expect(r.error.message).toContain('roomTempC');
    }
  });

  it('ignores stored entries that are not valid records', async () => {
    const { store, storage } = setup();
    storage.setItem(STORAGE_KEYS.records, JSON.stringify({ bad: { unitName: 1 } }));
    const list = await store.listRecords();
    expect(list.ok && list.value).toEqual([]);
    storage.setItem(STORAGE_KEYS.records, 'not json');
    expect((await store.listRecords()).ok).toBe(true);
  });

  it('autosaves, reads back and clears the run state', async () => {
    const { store } = setup();
    expect(await store.loadAutosave()).toEqual({ ok: true, value: { kind: 'none' } });
    const state = { format: 'spanmeter-run', steps: [1, 2, 3] };
    const saved = await store.autosave(state);
    expect(saved.ok).toBe(true);
    const back = await store.loadAutosave();
    expect(back.ok && back.value.kind === 'found' && back.value.state).toEqual(state);
    expect(await store.clearAutosave()).toEqual({ ok: true, value: { cleared: true } });
    expect(await store.clearAutosave()).toEqual({ ok: true, value: { cleared: false } });
  });

  it('exports as a download with the extension added once', async () => {
    const { store, downloads } = setup();
    await store.exportFile({ format: 'csv', suggestedName: 'unit/17', content: 'a,b\r\n' });
    await store.exportFile({ format: 'json', suggestedName: 'run.json', content: '{}' });
    expect(downloads.map((d) => [d.name, d.mime])).toEqual([
      ['unit_17.csv', 'text/csv;charset=utf-8'],
      ['run.json', 'application/json'],
    ]);
  });
});

describe('draftFromInfo', () => {
  it('leaves out empty optional fields (plain JSON, no undefined values)', () => {
    const d = draftFromInfo({ ...EMPTY_UNIT_INFO, unitName: ' OL-3 ', roomTempC: '21,5' }, []);
    expect(d).toEqual({ schemaVersion: RECORD_SCHEMA_VERSION, unitName: 'OL-3', runs: [], roomTempC: 21.5 });
    expect(Object.values(d as Record<string, unknown>).includes(undefined)).toBe(false);
  });
});
