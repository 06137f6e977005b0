import { describe, expect, it } from 'vitest';
import { CHANNELS, CONTRACT, MAX_PAYLOAD_BYTES, type Channel, type IpcResult } from '../main/ipc-contract.ts';
import {
  IpcError,
  measurePayload,
  registerIpc,
  type IpcHandlers,
  type InvokeEventLike,
} from '../main/ipc.ts';
import { buildSpanmeterApi } from '../main/preload-api.ts';
import { isTrustedSenderFrame } from '../main/security.ts';
import { sampleDraft, sampleRecord } from './main-fixtures.ts';

// Numbers refer to the Electron security checklist, https://www.electronjs.org/docs/latest/tutorial/security.

/** A fake ipcMain that records the handlers registered on it. */
function fakeIpcMain() {
  const handlers = new Map<string, (event: InvokeEventLike, ...args: unknown[]) => Promise<unknown>>();
  return {
    handlers,
    handle(channel: string, listener: (event: InvokeEventLike, ...args: unknown[]) => Promise<unknown>) {
      if (handlers.has(channel)) throw new Error(`second handler for ${channel}`);
      handlers.set(channel, listener);
    },
    invoke(channel: Channel, event: InvokeEventLike, ...args: unknown[]) {
      return handlers.get(channel)!(event, ...args) as Promise<IpcResult<unknown>>;
    },
  };
}

const fromApp: InvokeEventLike = { senderFrame: { url: 'app://spanmeter/index.html', parent: null } };

const record = sampleRecord();
const calls: Array<[Channel, unknown]> = [];
const handlers: IpcHandlers = {
  'records:list': () => ({ records: [], problems: [] }),
  'records:load': ({ id }) => {
    calls.push(['records:load', id]);
    if (id === 'missing-1') throw new IpcError('not-found', 'There is no record "missing-1".');
    if (id === 'broken-1') throw new Error('disk on fire\n    at secret (/home/x/stack.js:1:1)');
    if (id === 'eacces-1')
      throw Object.assign(new Error("EACCES: permission denied, open '/r/eacces-1.json'"), {
        code: 'EACCES',
      });
    if (id === 'bad-response-1') return { ...record, unitName: 42 } as never;
    return record;
  },
  'records:save': (draft) => ({ ...record, ...draft, id: draft.id ?? record.id }),
  'records:delete': ({ id }) => ({ id }),
  'records:export': () => ({ kind: 'cancelled' }),
  'records:import': () => ({ kind: 'cancelled' }),
  'records:delete-run': () => record,
  'records:restore-run': () => record,
  'records:undelete': () => record,
  'book:backup': () => ({ kind: 'cancelled' }),
  'book:restore': () => ({ kind: 'cancelled' }),
  'drift:save': () => ({ savedAt: '2031-03-14T10:00:00.000Z', stale: false }),
  'drift:list': () => [],
  'drift:load': () => {
    throw new Error('no drift logs here');
  },
  'run:autosave': () => ({ savedAt: '2031-03-14T10:00:00.000Z' }),
  'run:load-autosave': () => ({ kind: 'none' }),
  'run:clear-autosave': () => ({ cleared: false }),
};

function setup() {
  const ipc = fakeIpcMain();
  const log: string[] = [];
  registerIpc(ipc, handlers, {
    isTrustedSender: (e) => isTrustedSenderFrame(e.senderFrame),
    log: (l) => log.push(l),
  });
  return { ipc, log };
}

describe('registerIpc', () => {
  it('registers exactly one handler per contract channel', () => {
    const { ipc } = setup();
    expect([...ipc.handlers.keys()].sort()).toEqual([...CHANNELS].sort());
    expect(Object.keys(CONTRACT).sort()).toEqual([...CHANNELS].sort());
  });

  it('refuses to start with a channel unhandled', () => {
    const partial = { ...handlers } as Partial<IpcHandlers>;
    delete partial['records:list'];
    expect(() => registerIpc(fakeIpcMain(), partial as IpcHandlers, { isTrustedSender: () => true })).toThrow(
      'registerIpc: no handler for channel "records:list"',
    );
  });

  it('passes valid payloads and returns { ok: true, value }', async () => {
    const { ipc } = setup();
    expect(await ipc.invoke('records:load', fromApp, { id: record.id })).toEqual({ ok: true, value: record });
    expect(await ipc.invoke('records:list', fromApp)).toEqual({
      ok: true,
      value: { records: [], problems: [] },
    });
    const saved = await ipc.invoke('records:save', fromApp, sampleDraft());
    expect(saved.ok).toBe(true);
    expect(
      (await ipc.invoke('run:autosave', fromApp, { state: { step: 3, readings: [1.5, null] } })).ok,
    ).toBe(true);
  });

  // Checklist item 17: validate the sender of all IPC messages.
  it.each([
    ['another site', { senderFrame: { url: 'https://example.com/', parent: null } }],
    ['a lookalike host', { senderFrame: { url: 'app://spanmeter.evil/index.html', parent: null } }],
    ['a file:// page', { senderFrame: { url: 'file:///tmp/index.html', parent: null } }],
    ['an iframe inside the app', { senderFrame: { url: 'app://spanmeter/index.html', parent: {} } }],
    ['a frame that is gone', { senderFrame: null }],
  ])('rejects a call from %s with untrusted-sender, before the handler runs', async (_name, event) => {
    const { ipc, log } = setup();
    calls.length = 0;
    const result = await ipc.invoke('records:load', event as InvokeEventLike, { id: record.id });
    expect(result.ok).toBe(false);
    expect(!result.ok && result.error.code).toBe('untrusted-sender');
    expect(!result.ok && result.error.message).toMatch(
      /^records:load only answers the Spanmeter window; the call came from /,
    );
    expect(calls).toEqual([]);
    expect(log).toHaveLength(1);
  });

  it.each([
    ['a missing payload', 'records:load', [], 'records:load: invalid request: a payload is required'],
    [
      'a wrong type',
      'records:load',
      [{ id: 7 }],
      'records:load: invalid request: id: Invalid input: expected string, received number',
    ],
    [
      'an unknown key',
      'records:load',
      [{ id: 'vco-a', extra: 1 }],
      'records:load: invalid request: Unrecognized key: "extra"',
    ],
    [
      'path traversal in an id',
      'records:load',
      [{ id: '../../etc/passwd' }],
      'records:load: invalid request: id: record id "../../etc/passwd" contains ".." (path traversal)',
    ],
    [
      'a reserved id',
      'records:delete',
      [{ id: 'con' }],
      'records:delete: invalid request: id: record id "con" is a reserved Windows device name',
    ],
    ['a payload where none is taken', 'records:list', [{}], 'records:list takes no payload'],
    ['two arguments', 'records:load', [{ id: 'vco-a' }, 2], 'records:load takes one argument, got 2'],
    [
      'a bad export format',
      'records:export',
      [{ format: 'xml', suggestedName: 'a', content: '' }],
      'records:export: invalid request: format: Invalid option: expected one of "json"|"csv"',
    ],
    [
      'a newer schemaVersion',
      'records:save',
      [{ ...sampleDraft(), schemaVersion: 3 }],
      'records:save: invalid request: schemaVersion: Invalid input: expected 2',
    ],
  ] as const)('rejects %s with invalid-payload', async (_name, channel, args, message) => {
    const { ipc } = setup();
    const result = await ipc.invoke(channel, fromApp, ...args);
    expect(result).toEqual({ ok: false, error: { code: 'invalid-payload', message } });
  });

  it('rejects a request over 1 MiB with payload-too-large, and accepts one just under', async () => {
    const { ipc } = setup();
    const over = await ipc.invoke('records:export', fromApp, {
      format: 'csv',
      suggestedName: 'a',
      content: 'x'.repeat(MAX_PAYLOAD_BYTES),
    });
    expect(over.ok).toBe(false);
    expect(!over.ok && over.error.code).toBe('payload-too-large');
    expect(!over.ok && over.error.message).toMatch(
      /^records:export: the request is \d+ bytes; the limit is 1048576 bytes \(1 MiB\)$/,
    );
    const under = await ipc.invoke('records:export', fromApp, {
      format: 'csv',
      suggestedName: 'a',
      content: 'x'.repeat(MAX_PAYLOAD_BYTES - 100),
    });
    expect(under.ok).toBe(true);
  });

  it('counts UTF-8 bytes, not characters (RFC 3629: "€" is 3 bytes)', async () => {
    const { ipc } = setup();
    const content = '€'.repeat(Math.ceil(MAX_PAYLOAD_BYTES / 3) + 10); // fewer than 1 Mi characters
    expect(content.length).toBeLessThan(MAX_PAYLOAD_BYTES);
    const result = await ipc.invoke('records:export', fromApp, {
      format: 'csv',
      suggestedName: 'a',
      content,
    });
    expect(!result.ok && result.error.code).toBe('payload-too-large');
  });

  const circular: Record<string, unknown> = { id: 'vco-a' };
  circular.self = circular;
  it.each([
    ['a function', { id: 'vco-a', f: () => 1 }, 'key "f" is function'],
    ['undefined inside', { id: undefined }, 'key "id" is undefined'],
    ['a circular reference', circular, 'the payload contains a circular reference'],
    ['a bigint', { id: 1n }, 'key "id" is bigint'],
    ['a symbol', { id: Symbol('x') }, 'key "id" is symbol'],
    ['NaN', { id: Number.NaN }, 'key "id" is NaN'],
    ['Infinity', { n: Number.POSITIVE_INFINITY }, 'key "n" is Infinity'],
    ['a Date', { id: new Date(0) }, 'key "id" is a Date object'],
    ['a Map', { id: new Map() }, 'key "id" is a Map object'],
    [
      'binary data',
      { id: new Uint8Array(2) },
      'key "id" is binary data (a Uint8Array object), not allowed here',
    ],
  ])('rejects %s with not-json', async (_name, payload, reason) => {
    const { ipc } = setup();
    const result = await ipc.invoke('records:load', fromApp, payload);
    expect(result.ok).toBe(false);
    expect(!result.ok && result.error.code).toBe('not-json');
    expect(!result.ok && result.error.message).toContain(reason);
  });

  it('returns a handler’s IpcError as it is', async () => {
    const { ipc } = setup();
    expect(await ipc.invoke('records:load', fromApp, { id: 'missing-1' })).toEqual({
      ok: false,
      error: { code: 'not-found', message: 'There is no record "missing-1".' },
    });
  });

  it('turns an unexpected error into internal-error, first line only, never a stack trace', async () => {
    const { ipc } = setup();
    const result = await ipc.invoke('records:load', fromApp, { id: 'broken-1' });
    expect(result).toEqual({
      ok: false,
      error: { code: 'internal-error', message: 'records:load failed: disk on fire' },
    });
  });

  it('turns a file-system error into io-error', async () => {
    const { ipc } = setup();
    const result = await ipc.invoke('records:load', fromApp, { id: 'eacces-1' });
    expect(!result.ok && result.error.code).toBe('io-error');
    expect(!result.ok && result.error.message).toContain('EACCES: permission denied');
  });

  it('checks responses too: an invalid one becomes invalid-response', async () => {
    const { ipc } = setup();
    const result = await ipc.invoke('records:load', fromApp, { id: 'bad-response-1' });
    expect(result).toEqual({
      ok: false,
      error: {
        code: 'invalid-response',
        message:
          'records:load produced an invalid response: unitName: Invalid input: expected string, received number',
      },
    });
  });
});

describe('measurePayload', () => {
  it.each([
    [undefined, 0],
    [null, 4],
    [{ id: 'vco-a' }, 14],
    [['é'], 6], // "é" is 2 bytes in UTF-8 (RFC 3629)
  ])('%j measures %i bytes', (value, bytes) => {
    expect(measurePayload(value)).toEqual({ kind: 'ok', bytes });
  });
  it('counts binary bytes where allowed', () => {
    expect(measurePayload({ b: new Uint8Array(1000) }, true)).toEqual({
      kind: 'ok',
      bytes: 1000 + '{"b":null}'.length,
    });
  });
});

describe('buildSpanmeterApi (the preload’s API)', () => {
  const seen: Array<[string, unknown[]]> = [];
  const api = buildSpanmeterApi(async (channel, ...args) => {
    seen.push([channel, args]);
    return { ok: true, value: null };
  });

  it('has one function per channel and nothing else (checklist item 20: no ipcRenderer)', () => {
    const keys = Object.keys(api);
    expect(keys).toHaveLength(CHANNELS.length);
    for (const key of keys) expect(typeof (api as Record<string, unknown>)[key]).toBe('function');
    expect(keys).not.toContain('ipcRenderer');
    expect(keys).not.toContain('invoke');
    expect(Object.isFrozen(api)).toBe(true);
  });

  it.each([
    ['listRecords', [], 'records:list', []],
    ['loadRecord', ['vco-a'], 'records:load', [{ id: 'vco-a' }]],
    ['saveRecord', [{ x: 1 }], 'records:save', [{ x: 1 }]],
    ['deleteRecord', ['vco-a'], 'records:delete', [{ id: 'vco-a' }]],
    ['exportFile', [{ format: 'csv' }], 'records:export', [{ format: 'csv' }]],
    ['importRecord', [], 'records:import', []],
    ['autosaveRun', [{ step: 1 }], 'run:autosave', [{ state: { step: 1 } }]],
    ['loadAutosavedRun', [], 'run:load-autosave', []],
    ['clearAutosavedRun', [], 'run:clear-autosave', []],
  ])('%s(…) invokes %s', async (name, args, channel, sent) => {
    seen.length = 0;
    await (api as unknown as Record<string, (...a: unknown[]) => Promise<unknown>>)[name](...args);
    expect(seen).toEqual([[channel, sent]]);
  });

  it('covers every channel exactly once', async () => {
    seen.length = 0;
    const fns = api as unknown as Record<string, (...a: unknown[]) => Promise<unknown>>;
    for (const key of Object.keys(fns)) await fns[key]({});
    expect(seen.map(([c]) => c).sort()).toEqual([...CHANNELS].sort());
  });

  it('never rejects: a clone failure becomes not-json', async () => {
    const failing = buildSpanmeterApi(async () => {
      throw new Error('An object could not be cloned.');
    });
    expect(await failing.listRecords()).toEqual({
      ok: false,
      error: { code: 'not-json', message: 'records:list: An object could not be cloned.' },
    });
  });
});
