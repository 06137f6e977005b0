import { mkdtemp, readFile, readdir, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { RECORD_SCHEMA_VERSION, UnitRecordSchema } from '../main/ipc-contract.ts';
import { isValidRecordId, newRecordId, recordIdProblem, slugify } from '../main/record-id.ts';
import {
  StoreError,
  asideStamp,
  createRecordsStore,
  parseRecordText,
  type RecordsStore,
} from '../main/records-store.ts';
import { sampleDraft, sampleRecord } from './main-fixtures.ts';

let dir: string;
let recordsDir: string;
let store: RecordsStore;
let clock: Date;

beforeEach(async () => {
  dir = await mkdtemp(path.join(tmpdir(), 'spanmeter-store-'));
  recordsDir = path.join(dir, 'records');
  clock = new Date('2031-03-14T10:00:00.000Z');
  let counter = 0;
  store = createRecordsStore({
    recordsDir,
    autosaveFile: path.join(dir, 'autosave', 'run.json'),
    now: () => clock,
    randomBytes: (n) => new Uint8Array(n).fill(counter++),
  });
});
afterEach(async () => {
  await rm(dir, { recursive: true, force: true });
});

async function expectStoreError(promise: Promise<unknown>, code: string, message: RegExp) {
  const err = await promise.then(
    () => null,
    (e: unknown) => e,
  );
  expect(err).toBeInstanceOf(StoreError);
  expect((err as StoreError).code).toBe(code);
  expect((err as StoreError).message).toMatch(message);
}

describe('record ids', () => {
  // Reserved device names: Microsoft Learn, "Naming Files, Paths, and Namespaces".
  const reserved = ['con', 'prn', 'aux', 'nul', 'com1', 'com9', 'lpt1', 'lpt9', 'com0', 'lpt0'];
  it.each(reserved)('rejects the reserved Windows name %s', (id) => {
    expect(recordIdProblem(id)).toBe(`record id "${id}" is a reserved Windows device name`);
  });
  it.each([
    ['', 'record id is empty'],
    ['../secrets', 'record id "../secrets" contains ".." (path traversal)'],
    ['..', 'record id ".." contains ".." (path traversal)'],
    ['/etc/passwd', 'record id "/etc/passwd" is an absolute path'],
    ['C:\\Windows', 'record id "C:\\\\Windows" is an absolute path'],
    ['\\\\server\\share', 'record id "\\\\\\\\server\\\\share" is an absolute path'],
    ['a/b', 'record id "a/b" contains a path separator'],
    ['a\\b', 'record id "a\\\\b" contains a path separator'],
    ['a\0b', 'record id "a\\u0000b" contains a NUL character'],
    ['x'.repeat(65), `record id "${'x'.repeat(65)}" is 65 characters long; the limit is 64`],
    ['Vco-A', 'record id "Vco-A" may only contain a-z, 0-9 and "-", and must start with a letter or digit'],
    ['-vco', 'record id "-vco" may only contain a-z, 0-9 and "-", and must start with a letter or digit'],
    [
      'vco.json',
      'record id "vco.json" may only contain a-z, 0-9 and "-", and must start with a letter or digit',
    ],
    [
      'con.txt',
      'record id "con.txt" may only contain a-z, 0-9 and "-", and must start with a letter or digit',
    ],
  ])('rejects %j: %s', (id, message) => {
    expect(recordIdProblem(id)).toBe(message);
  });
  it.each(['vco-a', 'kestrel-vco-rev-c-k3m9x2qa', 'console', 'com10', 'x'.repeat(64), '0'])(
    'accepts %s',
    (id) => {
      expect(recordIdProblem(id)).toBeNull();
    },
  );
  it('generates safe slug + random ids', () => {
    expect(slugify('VCO #2 (bench, rev B)')).toBe('vco-2-bench-rev-b');
    expect(slugify('Ölfilter Ä')).toBe('olfilter-a');
    expect(slugify('†††')).toBe('unit');
    expect(newRecordId('VCO 2', (n) => new Uint8Array(n))).toBe('vco-2-aaaaaaaa');
    for (const name of ['CON', 'nul', '../../x', 'x'.repeat(300), '']) {
      expect(isValidRecordId(newRecordId(name, (n) => crypto.getRandomValues(new Uint8Array(n))))).toBe(true);
    }
  });
});

describe('records store', () => {
  it('round-trips save → load → list → delete', async () => {
    const saved = await store.save(sampleDraft());
    expect(saved.id).toMatch(/^kestrel-vco-rev-c-[a-z2-9]{8}$/);
    expect(saved.createdAt).toBe('2031-03-14T10:00:00.000Z');
    expect(saved.updatedAt).toBe('2031-03-14T10:00:00.000Z');
    expect(UnitRecordSchema.parse(saved)).toEqual(saved);

    expect(await store.load(saved.id)).toEqual(saved);
    const listed = await store.list();
    expect(listed.problems).toEqual([]);
    expect(listed.records).toEqual([
      {
        id: saved.id,
        unitName: 'Kestrel VCO rev C',
        serial: 'KS-0042',
        createdAt: saved.createdAt,
        updatedAt: saved.updatedAt,
        runCount: 1,
        lastRunAt: '2031-03-14T09:30:00.000Z',
      },
    ]);

    // Saving again keeps createdAt and moves updatedAt.
    clock = new Date('2031-03-15T08:00:00.000Z');
    const again = await store.save({ ...saved, notes: 'After trimming.' });
    expect(again.createdAt).toBe(saved.createdAt);
    expect(again.updatedAt).toBe('2031-03-15T08:00:00.000Z');
    expect((await store.load(saved.id)).notes).toBe('After trimming.');

    expect(await store.delete(saved.id)).toEqual({ id: saved.id });
    await expectStoreError(
      store.load(saved.id),
      'not-found',
      /^There is no record "kestrel-vco-rev-c-[a-z2-9]{8}" in /,
    );
    await expectStoreError(store.delete(saved.id), 'not-found', /There is no record/);
    expect((await store.list()).records).toEqual([]);
  });

  it('lists an empty or missing folder as empty', async () => {
    expect(await store.list()).toEqual({ records: [], problems: [] });
  });

  it('lists newest first', async () => {
    const a = await store.save(sampleDraft({ unitName: 'Unit A' }));
    clock = new Date('2031-03-16T00:00:00.000Z');
    const b = await store.save(sampleDraft({ unitName: 'Unit B' }));
    expect((await store.list()).records.map((r) => r.id)).toEqual([b.id, a.id]);
  });

  it('writes atomically: no temporary files are left, and the file is complete JSON', async () => {
    const saved = await store.save(sampleDraft());
    // Each save is based on the revision the previous one returned (issue 10: a save names its base revision).
    let current = saved;
    for (let i = 0; i < 5; i++) current = await store.save({ ...current, notes: `pass ${i}` });
    await store.saveAutosave({ step: 2 });
    expect(await readdir(recordsDir)).toEqual([`${saved.id}.json`]);
    expect(await readdir(path.join(dir, 'autosave'))).toEqual(['run.json']);
    const text = await readFile(path.join(recordsDir, `${saved.id}.json`), 'utf8');
    expect(JSON.parse(text).notes).toBe('pass 4');
    expect(JSON.parse(text).schemaVersion).toBe(RECORD_SCHEMA_VERSION);
  });

  it('rejects path traversal and reserved ids before touching the disk', async () => {
    await expectStoreError(
      store.load('../../etc/passwd'),
      'invalid-id',
      /contains "\.\." \(path traversal\)/,
    );
    await expectStoreError(store.load('/etc/passwd'), 'invalid-id', /is an absolute path/);
    await expectStoreError(store.delete('nul'), 'invalid-id', /reserved Windows device name/);
    await expectStoreError(
      store.save(sampleDraft({ id: 'com1' })),
      'invalid-payload',
      /reserved Windows device name/,
    );
    await expectStoreError(store.save(sampleDraft({ id: '..\\x' })), 'invalid-payload', /path traversal/);
  });

  it('rejects an invalid record with the fields named', async () => {
    await expectStoreError(
      store.save({ ...sampleDraft(), unitName: '', roomTempC: 500 } as never),
      'invalid-payload',
      /^The record is not valid: unitName: .*; roomTempC: /,
    );
  });

  describe.each([
    ['not JSON', '{"schemaVersion": 1, "unitName": ', /is damaged: it is not valid JSON/],
    ['an array', '[1, 2]', /is damaged: it does not hold a JSON object/],
    ['no schemaVersion', '{"unitName": "x"}', /is damaged: it has no numeric "schemaVersion"/],
    [
      'a broken field',
      JSON.stringify({ ...sampleRecord({ id: 'vco-a' }), runs: 'none' }),
      /is damaged: it does not match the record schema: runs: /,
    ],
    [
      'an id that is not its name',
      JSON.stringify(sampleRecord({ id: 'vco-b' })),
      /is damaged: its id "vco-b" does not match its file name/,
    ],
  ])('a corrupt file (%s)', (_name, content, message) => {
    it('load gives a clear error naming the file, and moves it aside', async () => {
      await store.save(sampleDraft({ id: 'vco-c' })); // creates the folder; an unrelated good record
      await writeFile(path.join(recordsDir, 'vco-a.json'), content);
      await expectStoreError(store.load('vco-a'), 'corrupt-record', message);
      await expectStoreError(store.load('vco-a'), 'not-found', /no record "vco-a"/);
      const names = await readdir(recordsDir);
      expect(names.sort()).toEqual(['vco-a.corrupt-20310314T100000.000Z.json', 'vco-c.json']);
      // Kept aside byte for byte, not deleted.
      expect(await readFile(path.join(recordsDir, 'vco-a.corrupt-20310314T100000.000Z.json'), 'utf8')).toBe(
        content,
      );
    });

    it('list reports it as a problem and still lists the good records', async () => {
      const good = await store.save(sampleDraft({ id: 'vco-c' }));
      await writeFile(path.join(recordsDir, 'vco-a.json'), content);
      const listed = await store.list();
      expect(listed.records.map((r) => r.id)).toEqual([good.id]);
      expect(listed.problems).toHaveLength(1);
      expect(listed.problems[0].file).toBe('vco-a.json');
      expect(listed.problems[0].code).toBe('corrupt-record');
      expect(listed.problems[0].message).toMatch(message);
      expect(listed.problems[0].message).toMatch(
        /It was moved aside to .*vco-a\.corrupt-20310314T100000\.000Z\.json\.$/,
      );
      // Issue 10: the file kept aside stays listed as unreadable (it used to vanish from the list).
      expect((await store.list()).problems.map((p) => p.file)).toEqual([
        'vco-a.corrupt-20310314T100000.000Z.json',
      ]);
    });
  });

  it('never overwrites an earlier aside file', async () => {
    await store.save(sampleDraft({ id: 'vco-c' }));
    for (let i = 0; i < 2; i++) {
      await writeFile(path.join(recordsDir, 'vco-a.json'), `broken ${i}`);
      await expectStoreError(store.load('vco-a'), 'corrupt-record', /moved aside/);
    }
    expect((await readdir(recordsDir)).sort()).toEqual([
      'vco-a.corrupt-20310314T100000.000Z-1.json',
      'vco-a.corrupt-20310314T100000.000Z.json',
      'vco-c.json',
    ]);
  });

  it('leaves a record of a newer schemaVersion untouched, with a clear error, and refuses to overwrite it', async () => {
    await store.save(sampleDraft({ id: 'vco-c' }));
    const newer = JSON.stringify({ ...sampleRecord({ id: 'vco-n' }), schemaVersion: 3, extra: 'future' });
    await writeFile(path.join(recordsDir, 'vco-n.json'), newer);
    await expectStoreError(
      store.load('vco-n'),
      'unsupported-schema-version',
      /vco-n\.json cannot be opened: it has schemaVersion 3; this version of Spanmeter reads schemaVersion 2 \(the file was written by a newer Spanmeter; update the app to open it\)\. It was left untouched\.$/,
    );
    await expectStoreError(
      store.save(sampleDraft({ id: 'vco-n' })),
      'unsupported-schema-version',
      /was not overwritten/,
    );
    expect(await readFile(path.join(recordsDir, 'vco-n.json'), 'utf8')).toBe(newer);
    const listed = await store.list();
    expect(listed.problems.map((p) => [p.file, p.code])).toEqual([
      ['vco-n.json', 'unsupported-schema-version'],
    ]);
    expect(await readFile(path.join(recordsDir, 'vco-n.json'), 'utf8')).toBe(newer);
  });

  it('lists files whose names are not ids as problems, and ignores other files', async () => {
    await store.save(sampleDraft({ id: 'vco-c' }));
    await writeFile(path.join(recordsDir, 'CON.json'), '{}');
    await writeFile(path.join(recordsDir, 'readme.txt'), 'hello');
    await writeFile(path.join(recordsDir, '.tmp-vco-c.json-1-abc'), 'partial');
    const listed = await store.list();
    expect(listed.records.map((r) => r.id)).toEqual(['vco-c']);
    expect(listed.problems.map((p) => [p.file, p.code])).toEqual([['CON.json', 'invalid-id']]);
  });
});

describe('autosave', () => {
  it('saves, loads and clears a run in progress', async () => {
    expect(await store.loadAutosave()).toEqual({ kind: 'none' });
    const state = {
      planVolts: [0, 1, 2],
      done: 1,
      readings: [{ hz: 65.4, cents: -0.2 }],
      paused: false,
      note: null,
    };
    expect(await store.saveAutosave(state)).toEqual({ savedAt: '2031-03-14T10:00:00.000Z' });
    expect(await store.loadAutosave()).toEqual({ kind: 'found', savedAt: '2031-03-14T10:00:00.000Z', state });
    expect(await store.clearAutosave()).toEqual({ cleared: true });
    expect(await store.clearAutosave()).toEqual({ cleared: false });
    expect(await store.loadAutosave()).toEqual({ kind: 'none' });
  });

  it('moves a corrupt autosave aside with a clear error', async () => {
    await store.saveAutosave({ a: 1 });
    await writeFile(path.join(dir, 'autosave', 'run.json'), '{"schemaVersion":1,');
    await expectStoreError(
      store.loadAutosave(),
      'corrupt-record',
      /run\.json is not valid JSON .* It was moved aside to .*run\.corrupt-20310314T100000\.000Z\.json\.$/,
    );
    expect(await readdir(path.join(dir, 'autosave'))).toEqual(['run.corrupt-20310314T100000.000Z.json']);
  });

  it('leaves an autosave of another schemaVersion untouched', async () => {
    await store.saveAutosave({ a: 1 });
    const file = path.join(dir, 'autosave', 'run.json');
    await writeFile(file, '{"schemaVersion":9,"savedAt":"x","state":{}}');
    await expectStoreError(
      store.loadAutosave(),
      'unsupported-schema-version',
      /schemaVersion 9; this version reads 1\. It was left untouched\./,
    );
    expect(await readFile(file, 'utf8')).toBe('{"schemaVersion":9,"savedAt":"x","state":{}}');
  });
});

describe('parseRecordText and asideStamp', () => {
  it('reads a valid record', () => {
    const r = sampleRecord();
    expect(parseRecordText(JSON.stringify(r))).toEqual({ kind: 'ok', record: r });
  });
  it('tells an older version from a newer one', () => {
    expect(parseRecordText('{"schemaVersion":0}')).toMatchObject({ kind: 'unsupported', schemaVersion: 0 });
    expect(parseRecordText('{"schemaVersion":3}').kind).toBe('unsupported');
  });
  it('uses ISO 8601 basic format in UTC with a decimal fraction (ISO 8601-1:2019, basic format and decimal fractions)', () => {
    expect(asideStamp(new Date('2031-04-05T06:07:08.009Z'))).toBe('20310405T060708.009Z');
  });
});
