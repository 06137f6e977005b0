import { mkdtemp, readFile, readdir, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { createHandlers, safeExportName, type DialogLike } from '../main/handlers.ts';
import { registerIpc, type InvokeEventLike } from '../main/ipc.ts';
import type { Channel, IpcResult } from '../main/ipc-contract.ts';
import { createRecordsStore } from '../main/records-store.ts';
import { isTrustedSenderFrame } from '../main/security.ts';
import { sampleDraft, sampleRecord } from './main-fixtures.ts';

let dir: string;
let saveAnswer: { canceled: boolean; filePath?: string };
let openAnswer: { canceled: boolean; filePaths: string[] };
let lastSaveOptions: unknown;

const dialog: DialogLike = {
  showSaveDialog: async (options) => {
    lastSaveOptions = options;
    return saveAnswer;
  },
  showOpenDialog: async () => openAnswer,
};

const fromApp: InvokeEventLike = { senderFrame: { url: 'app://spanmeter/index.html', parent: null } };

function setup() {
  const listeners = new Map<string, (event: InvokeEventLike, ...args: unknown[]) => Promise<unknown>>();
  registerIpc(
    { handle: (channel, listener) => listeners.set(channel, listener) },
    createHandlers({
      store: createRecordsStore({
        recordsDir: path.join(dir, 'records'),
        autosaveFile: path.join(dir, 'autosave.json'),
      }),
      dialog,
      exportDir: () => path.join(dir, 'Documents'),
    }),
    { isTrustedSender: (e) => isTrustedSenderFrame(e.senderFrame) },
  );
  return (channel: Channel, ...args: unknown[]) =>
    listeners.get(channel)!(fromApp, ...args) as Promise<IpcResult<never>>;
}

beforeEach(async () => {
  dir = await mkdtemp(path.join(tmpdir(), 'spanmeter-handlers-'));
  saveAnswer = { canceled: true };
  openAnswer = { canceled: true, filePaths: [] };
});
afterEach(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('records through IPC', () => {
  it('saves a new record, lists, loads and deletes it', async () => {
    const call = setup();
    const saved = (await call('records:save', sampleDraft())) as IpcResult<{ id: string }>;
    expect(saved.ok).toBe(true);
    const id = saved.ok ? saved.value.id : '';
    const list = (await call('records:list')) as IpcResult<{ records: Array<{ id: string }> }>;
    expect(list.ok && list.value.records.map((r) => r.id)).toEqual([id]);
    expect(((await call('records:load', { id })) as IpcResult<unknown>).ok).toBe(true);
    expect(await call('records:delete', { id })).toEqual({ ok: true, value: { id } });
    const gone = (await call('records:load', { id })) as IpcResult<unknown>;
    expect(!gone.ok && gone.error.code).toBe('not-found');
  });
});

describe('records:export', () => {
  it.each([
    ['../../VCO 2: before/after', 'csv', 'after.csv'],
    ['VCO 2: before', 'json', 'VCO 2 before.json'],
    ['report.CSV', 'csv', 'report.csv'],
    // Device names are reserved even with an extension: "NUL.txt is equivalent to NUL" (Microsoft Learn, "Naming Files, Paths, and Namespaces").
    ['CON', 'csv', 'CON_.csv'],
    ['nul.csv', 'csv', 'nul_.csv'],
    ['console', 'csv', 'console.csv'],
    ['...', 'json', 'spanmeter-export.json'],
    ['a\u0000b\u001f<>|?*"c', 'csv', 'abc.csv'], // characters Windows forbids (Microsoft Learn, "Naming Files, Paths, and Namespaces")
  ] as const)('safeExportName(%j, %s) → %s', (name, format, expected) => {
    expect(safeExportName(name, format)).toBe(expected);
  });

  it('writes the content where the user chose, adding the extension', async () => {
    const call = setup();
    saveAnswer = { canceled: false, filePath: path.join(dir, 'kestrel-before') };
    const result = await call('records:export', {
      format: 'csv',
      suggestedName: 'kestrel before',
      content: 'volts,hz\n0,65.406\n',
    });
    expect(result).toEqual({ ok: true, value: { kind: 'saved', fileName: 'kestrel-before.csv' } });
    expect(await readFile(path.join(dir, 'kestrel-before.csv'), 'utf8')).toBe('volts,hz\n0,65.406\n');
    expect(lastSaveOptions).toMatchObject({ defaultPath: path.join(dir, 'Documents', 'kestrel before.csv') });
    expect((await readdir(dir)).filter((n) => n.startsWith('.tmp-'))).toEqual([]);
  });

  it('reports a cancelled dialog', async () => {
    const call = setup();
    expect(await call('records:export', { format: 'json', suggestedName: 'x', content: '{}' })).toEqual({
      ok: true,
      value: { kind: 'cancelled' },
    });
  });
});

describe('records:import', () => {
  it('returns a valid record file, checked, without storing it', async () => {
    const call = setup();
    const file = path.join(dir, 'kestrel.json');
    await writeFile(file, JSON.stringify(sampleRecord()));
    openAnswer = { canceled: false, filePaths: [file] };
    expect(await call('records:import')).toEqual({
      ok: true,
      value: { kind: 'imported', fileName: 'kestrel.json', record: sampleRecord() },
    });
    expect(await readFile(file, 'utf8')).toBe(JSON.stringify(sampleRecord()));
  });

  it.each([
    ['not JSON', 'hello', 'invalid-file', 'kestrel.json is not a Spanmeter record: it is not valid JSON'],
    [
      'a newer version',
      JSON.stringify({ ...sampleRecord(), schemaVersion: 3 }),
      'unsupported-schema-version',
      'kestrel.json cannot be imported: it has schemaVersion 3',
    ],
  ])('rejects %s and leaves the file alone', async (_name, content, code, message) => {
    const call = setup();
    const file = path.join(dir, 'kestrel.json');
    await writeFile(file, content);
    openAnswer = { canceled: false, filePaths: [file] };
    const result = await call('records:import');
    expect(!result.ok && result.error.code).toBe(code);
    expect(!result.ok && result.error.message).toContain(message);
    expect(await readFile(file, 'utf8')).toBe(content);
  });

  it('rejects a file over 1 MiB', async () => {
    const call = setup();
    const file = path.join(dir, 'big.json');
    await writeFile(file, ' '.repeat(1024 * 1024 + 1));
    openAnswer = { canceled: false, filePaths: [file] };
    expect(await call('records:import')).toEqual({
      ok: false,
      error: { code: 'file-too-large', message: 'big.json is 1.0 MiB; a record file is at most 1.0 MiB.' },
    });
  });
});
