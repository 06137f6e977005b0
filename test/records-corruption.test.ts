// Corruption in both stores (issue 10): a damaged blob, a damaged file, a record of a newer schema. In each
// case the data is listed as unreadable, kept byte for byte, and never overwritten by a later save.
import 'fake-indexeddb/auto';
import { mkdir, mkdtemp, readFile, readdir, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { IDBFactory } from 'fake-indexeddb';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { base64ToBytes, parseBackup } from '../main/record-book.ts';
import { createRecordsStore, type RecordsStore } from '../main/records-store.ts';
import { DB_NAME } from '../renderer/src/storage/idb-store.ts';
import { browserStore, STORAGE_KEYS, type KeyValueStorage } from '../renderer/src/storage/store.ts';
import { sampleDraft, sampleRecord, sampleRun } from './main-fixtures.ts';

const decode = (b64: string) => new TextDecoder().decode(base64ToBytes(b64));

describe('desktop store: damaged and newer files', () => {
  let dir: string;
  let recordsDir: string;
  let store: RecordsStore;
  beforeEach(async () => {
    dir = await mkdtemp(path.join(tmpdir(), 'spanmeter-corrupt-'));
    recordsDir = path.join(dir, 'records');
    store = createRecordsStore({ recordsDir, autosaveFile: path.join(dir, 'auto.json') });
  });
  afterEach(() => rm(dir, { recursive: true, force: true }));

  it('a file with one byte cut off: listed, kept byte for byte, and a save onto it moves it aside first', async () => {
    const good = await store.save(sampleDraft({ unitName: 'Ostlund Lane VCO 1' }));
    const text = await readFile(path.join(recordsDir, `${good.id}.json`), 'utf8');
    const damaged = text.slice(0, -2); // one byte of JSON (and the newline) cut off
    await writeFile(path.join(recordsDir, `${good.id}.json`), damaged);
    const listed = await store.list();
    expect(listed.records).toEqual([]);
    expect(listed.problems.map((p) => p.code)).toEqual(['corrupt-record']);
    // The next save under that id (the app still holds the record) does not destroy the damaged file.
    const saved = await store.save({ ...good, runs: [...good.runs, sampleRun('run-2', 'after')] });
    expect(saved.runs.map((r) => r.id)).toEqual([good.runs[0].id, 'run-2']);
    const names = (await readdir(recordsDir)).sort();
    const aside = names.filter((n) => n.includes('.corrupt-'));
    expect(aside).toHaveLength(1);
    expect(await readFile(path.join(recordsDir, aside[0]), 'utf8')).toBe(damaged);
    // Still listed as unreadable, and still in the backup byte for byte.
    expect((await store.list()).problems.map((p) => p.file)).toEqual(aside);
    const backup = parseBackup((await store.backup()).text);
    expect(backup.kind === 'ok' && backup.book.unreadable.map((u) => decode(u.base64))).toEqual([damaged]);
  });

  it('hand-edited invalid JSON is not overwritten by a save (the header’s promise)', async () => {
    const handEdited = '{ "schemaVersion": 1, "unitName": "VCO", oops }';
    await mkdir(recordsDir);
    await writeFile(path.join(recordsDir, 'vco-a.json'), handEdited);
    await store.save(sampleDraft({ id: 'vco-a' }));
    const aside = (await readdir(recordsDir)).filter((n) => n.includes('.corrupt-'));
    expect(aside).toHaveLength(1);
    expect(await readFile(path.join(recordsDir, aside[0]), 'utf8')).toBe(handEdited);
  });

  it('a record of a newer schemaVersion: listed, never overwritten by save, delete or run changes', async () => {
    await store.save(sampleDraft({ unitName: 'Ostlund Lane VCO 2' }));
    const newer = JSON.stringify({ ...sampleRecord({ id: 'vco-n' }), schemaVersion: 3, future: [1, 2] });
    await writeFile(path.join(recordsDir, 'vco-n.json'), newer);
    expect((await store.list()).problems.map((p) => [p.file, p.code])).toEqual([
      ['vco-n.json', 'unsupported-schema-version'],
    ]);
    for (const attempt of [
      () => store.save(sampleDraft({ id: 'vco-n' })),
      () => store.delete('vco-n'),
      () => store.deleteRun('vco-n', sampleRun().id),
      () => store.undelete('vco-n'),
    ]) {
      await expect(attempt()).rejects.toMatchObject({ code: 'unsupported-schema-version' });
      expect(await readFile(path.join(recordsDir, 'vco-n.json'), 'utf8')).toBe(newer);
    }
    // Backed up byte for byte, and restored aside (never over a record) into another book.
    const { text } = await store.backup();
    const other = createRecordsStore({
      recordsDir: path.join(dir, 'other'),
      autosaveFile: path.join(dir, 'a2.json'),
    });
    const r = await other.restore(text, 'ask');
    expect(r).toMatchObject({ kind: 'restored', counts: { added: 1, keptAside: 1 } });
    const kept = (await readdir(path.join(dir, 'other'))).filter((n) => n.includes('.corrupt-'));
    expect(await readFile(path.join(dir, 'other', kept[0]), 'utf8')).toBe(newer);
  });
});

function fakeStorage(): KeyValueStorage & { map: Map<string, string> } {
  const map = new Map<string, string>();
  return {
    map,
    getItem: (k) => map.get(k) ?? null,
    setItem: (k, v) => void map.set(k, v),
    removeItem: (k) => void map.delete(k),
  };
}

function fiveRecords(): Record<string, unknown> {
  const out: Record<string, unknown> = {};
  for (let i = 1; i <= 5; i++) {
    const id = `ostlund-vco-${i}-aaaaaaa${i}`;
    out[id] = sampleRecord({ id, unitName: `Ostlund Lane VCO ${i}` });
  }
  return out;
}

describe('browser store: migration from localStorage and damaged entries', () => {
  it('migrates five records, one entry each, and removes the blob only after reading them back', async () => {
    const legacy = fakeStorage();
    legacy.setItem(STORAGE_KEYS.records, JSON.stringify(fiveRecords()));
    legacy.setItem(
      STORAGE_KEYS.autosave,
      JSON.stringify({ savedAt: '2031-03-14T10:00:00.000Z', state: { n: 1 } }),
    );
    const idb = new IDBFactory();
    const store = browserStore({ indexedDB: idb, legacy, download: () => undefined });
    const list = await store.listBook();
    expect(list.ok && list.value.records.length).toBe(5);
    expect(list.ok && list.value.problems).toEqual([]);
    expect(legacy.map.has(STORAGE_KEYS.records)).toBe(false);
    expect(await store.loadAutosave()).toMatchObject({ ok: true, value: { kind: 'found', state: { n: 1 } } });
    // A reload (a new store on the same database) finds them all.
    const again = browserStore({ indexedDB: idb, legacy, download: () => undefined });
    const l2 = await again.listRecords();
    expect(l2.ok && l2.value.length).toBe(5);
  });

  it('a blob with one byte cut off: kept whole as one unreadable entry, listed, and saving does not erase it', async () => {
    const legacy = fakeStorage();
    const blob = JSON.stringify(fiveRecords());
    const damaged = blob.slice(0, -1);
    legacy.setItem(STORAGE_KEYS.records, damaged);
    const store = browserStore({ indexedDB: new IDBFactory(), legacy, download: () => undefined });
    const list = await store.listBook();
    expect(list.ok && list.value.problems.map((p) => p.code)).toEqual(['corrupt-record']);
    const saved = await store.saveRecord(sampleDraft({ unitName: 'Ostlund Lane VCO 6' }));
    expect(saved.ok).toBe(true);
    const after = await store.listBook();
    expect(after.ok && after.value.records.length).toBe(1);
    expect(after.ok && after.value.problems.length).toBe(1);
    // Byte for byte, in the backup.
    let backupText = '';
    const withDownload = browserStore({
      indexedDB: new IDBFactory(),
      legacy: (() => {
        const l = fakeStorage();
        l.setItem(STORAGE_KEYS.records, damaged);
        return l;
      })(),
      download: (_n, _m, c) => (backupText = c),
    });
    await withDownload.backupBook();
    const parsed = parseBackup(backupText);
    expect(parsed.kind === 'ok' && parsed.book.unreadable.map((u) => decode(u.base64))).toEqual([damaged]);
  });

  it('a record of a newer schema in the blob: migrated as it is, listed, never overwritten or erased', async () => {
    const legacy = fakeStorage();
    const records = fiveRecords();
    const newerId = 'ostlund-vco-9-aaaaaaa9';
    records[newerId] = { ...sampleRecord({ id: newerId }), schemaVersion: 99, extra: 'future' };
    legacy.setItem(STORAGE_KEYS.records, JSON.stringify(records));
    let backupText = '';
    const store = browserStore({
      indexedDB: new IDBFactory(),
      legacy,
      download: (_n, _m, c) => (backupText = c),
    });
    const list = await store.listBook();
    expect(list.ok && list.value.records.length).toBe(5);
    expect(list.ok && list.value.problems.map((p) => [p.file, p.code])).toEqual([
      [newerId, 'unsupported-schema-version'],
    ]);
    const refused = await store.saveRecord(sampleDraft({ id: newerId }));
    expect(refused.ok ? 'saved' : refused.error.code).toBe('unsupported-schema-version');
    expect((await store.deleteRecord(newerId)).ok).toBe(false);
    // An unrelated save leaves it in place (it used to be erased).
    expect((await store.saveRecord(sampleDraft({ unitName: 'Ostlund Lane VCO 7' }))).ok).toBe(true);
    await store.backupBook();
    const parsed = parseBackup(backupText);
    expect(parsed.kind === 'ok' && parsed.book.unreadable.map((u) => decode(u.base64))).toEqual([
      JSON.stringify(records[newerId]),
    ]);
    expect(parsed.kind === 'ok' && parsed.book.records.length).toBe(6);
  });

  it('a damaged entry in IndexedDB: listed, and a save under its id moves it aside byte for byte', async () => {
    const idb = new IDBFactory();
    const store = browserStore({ indexedDB: idb, download: () => undefined });
    const saved = await store.saveRecord(sampleDraft({ unitName: 'Ostlund Lane VCO 8' }));
    if (!saved.ok) throw new Error(saved.error.message);
    const id = saved.value.id;
    const req = idb.open(DB_NAME);
    const raw = await new Promise<IDBDatabase>((resolve, reject) => {
      req.onsuccess = () => resolve(req.result);
      req.onerror = () => reject(req.error);
    });
    const damaged = JSON.stringify(saved.value).slice(0, -1);
    await new Promise<void>((resolve, reject) => {
      const tx = raw.transaction('records', 'readwrite');
      tx.objectStore('records').put(damaged, id);
      tx.oncomplete = () => resolve();
      tx.onerror = () => reject(tx.error);
    });
    raw.close();
    const list = await store.listBook();
    expect(list.ok && list.value.problems.map((p) => [p.file, p.code])).toEqual([[id, 'corrupt-record']]);
    const again = await store.saveRecord({ ...saved.value, runs: [...saved.value.runs, sampleRun('run-2')] });
    expect(again.ok).toBe(true);
    const after = await store.listBook();
    expect(after.ok && after.value.records.map((r) => r.id)).toEqual([id]);
    expect(after.ok && after.value.problems.map((p) => p.file)).toEqual([
      expect.stringMatching(new RegExp(`^${id}\\.corrupt-`)),
    ]);
  });
});
