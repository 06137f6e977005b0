// Model-based concurrency tests of both record stores (desktop files, browser IndexedDB): batches of
// saves from up-to-date and stale copies, run and record deletes and restores, reloads and autosaves are
// issued at once (fast-check generates them); each outcome, taken in the order the store finished them,
// must be what a simple model of the book says, and at the end the store must equal the model: no
// acknowledged run lost, no record dropped, nothing resurrected. Common practice for stateful systems
// (model-based testing, as fast-check's documentation describes it), no source for the rules themselves:
// they are the rules issue 10 asks for.
import 'fake-indexeddb/auto';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import fc from 'fast-check';
import { IDBFactory } from 'fake-indexeddb';
import { expect } from 'vitest';
import type { IpcResult, JsonValue, UnitRecord, UnitRecordDraft } from '../main/ipc-contract.ts';
import { StoreError, createRecordsStore } from '../main/records-store.ts';
import { browserStore } from '../renderer/src/storage/store.ts';
import { sampleDraft, sampleRun } from './main-fixtures.ts';

/** The stores behind one interface: a result or an error code. */
type Out<T> = { ok: true; value: T } | { ok: false; code: string };
export interface Adapter {
  save(d: UnitRecordDraft): Promise<Out<UnitRecord>>;
  load(id: string): Promise<Out<UnitRecord>>;
  deleteRecord(id: string): Promise<Out<unknown>>;
  undelete(id: string): Promise<Out<UnitRecord>>;
  deleteRun(id: string, runId: string): Promise<Out<UnitRecord>>;
  restoreRun(id: string, runId: string): Promise<Out<UnitRecord>>;
  autosave(state: JsonValue, seq: number): Promise<Out<unknown>>;
  loadAutosave(): Promise<Out<{ kind: string; state?: JsonValue }>>;
  listIds(): Promise<{ live: string[]; trashed: string[] }>;
  close(): Promise<void>;
}

async function viaThrow<T>(p: Promise<T>): Promise<Out<T>> {
  try {
    return { ok: true, value: await p };
  } catch (err) {
    if (err instanceof StoreError) return { ok: false, code: err.code };
    throw err;
  }
}
const viaResult = async <T>(p: Promise<IpcResult<T>>): Promise<Out<T>> => {
  const r = await p;
  return r.ok ? r : { ok: false, code: r.error.code };
};

export async function desktopAdapter(): Promise<Adapter> {
  const dir = await mkdtemp(path.join(tmpdir(), 'spanmeter-model-'));
  const s = createRecordsStore({
    recordsDir: path.join(dir, 'records'),
    autosaveFile: path.join(dir, 'auto.json'),
  });
  return {
    save: (d) => viaThrow(s.save(d)),
    load: (id) => viaThrow(s.load(id)),
    deleteRecord: (id) => viaThrow(s.delete(id)),
    undelete: (id) => viaThrow(s.undelete(id)),
    deleteRun: (id, r) => viaThrow(s.deleteRun(id, r)),
    restoreRun: (id, r) => viaThrow(s.restoreRun(id, r)),
    autosave: (st, seq) => viaThrow(s.saveAutosave(st, seq)),
    loadAutosave: () => viaThrow(s.loadAutosave()),
    listIds: async () => {
      const l = await s.list();
      expect(l.problems).toEqual([]);
      return { live: l.records.map((r) => r.id).sort(), trashed: (l.trashed ?? []).map((r) => r.id).sort() };
    },
    close: () => rm(dir, { recursive: true, force: true }),
  };
}

export async function browserAdapter(): Promise<Adapter> {
  let t = Date.parse('2031-03-14T10:00:00Z');
  const s = browserStore({
    indexedDB: new IDBFactory(),
    download: () => undefined,
    now: () => new Date((t += 7)),
  });
  return {
    save: (d) => viaResult(s.saveRecord(d)),
    load: (id) => viaResult(s.loadRecord(id)),
    deleteRecord: (id) => viaResult(s.deleteRecord(id)),
    undelete: (id) => viaResult(s.undeleteRecord(id)),
    deleteRun: (id, r) => viaResult(s.deleteRun(id, r)),
    restoreRun: (id, r) => viaResult(s.restoreRun(id, r)),
    autosave: (st, seq) => viaResult(s.autosave(st, seq)),
    loadAutosave: () => viaResult(s.loadAutosave()),
    listIds: async () => {
      const l = await s.listBook();
      if (!l.ok) throw new Error(l.error.message);
      expect(l.value.problems).toEqual([]);
      return {
        live: l.value.records.map((r) => r.id).sort(),
        trashed: (l.value.trashed ?? []).map((r) => r.id).sort(),
      };
    },
    close: async () => undefined,
  };
}

// ---- The model ----
interface ModelRecord {
  rev: number;
  notes: string;
  runs: string[];
  trash: string[];
  deleted: boolean;
}

export type Op =
  | { kind: 'save'; rec: number; client: number; notes: boolean }
  | { kind: 'reload'; rec: number; client: number }
  | { kind: 'delete-run'; rec: number; pick: number }
  | { kind: 'restore-run'; rec: number; pick: number }
  | { kind: 'delete'; rec: number }
  | { kind: 'undelete'; rec: number }
  | { kind: 'autosave' };

export const opArb: fc.Arbitrary<Op> = fc.oneof(
  {
    weight: 5,
    arbitrary: fc.record({
      kind: fc.constant('save' as const),
      rec: fc.nat(1),
      client: fc.nat(2),
      notes: fc.boolean(),
    }),
  },
  {
    weight: 2,
    arbitrary: fc.record({ kind: fc.constant('reload' as const), rec: fc.nat(1), client: fc.nat(2) }),
  },
  {
    weight: 2,
    arbitrary: fc.record({ kind: fc.constant('delete-run' as const), rec: fc.nat(1), pick: fc.nat(9) }),
  },
  {
    weight: 1,
    arbitrary: fc.record({ kind: fc.constant('restore-run' as const), rec: fc.nat(1), pick: fc.nat(9) }),
  },
  { weight: 1, arbitrary: fc.record({ kind: fc.constant('delete' as const), rec: fc.nat(1) }) },
  { weight: 1, arbitrary: fc.record({ kind: fc.constant('undelete' as const), rec: fc.nat(1) }) },
  { weight: 2, arbitrary: fc.constant({ kind: 'autosave' as const }) },
);

export async function runScenario(make: () => Promise<Adapter>, batches: Op[][]): Promise<void> {
  const store = await make();
  try {
    const ids: string[] = [];
    const model = new Map<string, ModelRecord>();
    for (let i = 0; i < 2; i++) {
      const r = await store.save(
        sampleDraft({ unitName: `Ostlund Lane VCO ${i + 1}`, notes: 'n0', runs: [sampleRun(`r${i}-0`)] }),
      );
      if (!r.ok) throw new Error(r.code);
      ids.push(r.value.id);
      model.set(r.value.id, {
        rev: r.value.revision ?? 0,
        notes: 'n0',
        runs: [`r${i}-0`],
        trash: [],
        deleted: false,
      });
    }
    // Each client holds a copy of each record (stale copies arise naturally).
    const copies = new Map<string, UnitRecord>();
    for (const id of ids) {
      const r = await store.load(id);
      if (!r.ok) throw new Error(r.code);
      for (let c = 0; c < 3; c++) copies.set(`${c}:${id}`, r.value);
    }
    let runSerial = 0;
    let notesSerial = 0;
    let seq = 0;
    const autosaveSeqs: number[] = [];

    for (const batch of batches) {
      // Issue the whole batch at once; note the order in which outcomes arrive.
      const arrivals: { check: () => void }[] = [];
      const pending = batch.map((op) => {
        const id = ids[op.kind === 'autosave' ? 0 : op.rec];
        const m = model.get(id)!;
        switch (op.kind) {
          case 'save': {
            const copy = copies.get(`${op.client}:${id}`)!;
            const runId = `run-${++runSerial}`;
            const notes = op.notes ? `n${++notesSerial}` : copy.notes;
            const draft: UnitRecordDraft = { ...copy, notes, runs: [...copy.runs, sampleRun(runId)] };
            return store.save(draft).then((out) =>
              arrivals.push({
                check: () => {
                  const fresh = copy.revision === m.rev;
                  const changesNotes = notes !== m.notes;
                  const expectConflict = m.deleted || (!fresh && changesNotes);
                  if (expectConflict) {
                    expect(out, `save on ${id} should be refused`).toMatchObject({
                      ok: false,
                      code: 'conflict',
                    });
                    return;
                  }
                  m.runs.push(runId);
                  if (fresh) m.notes = notes ?? m.notes;
                  m.rev++;
                  expect(out.ok, `save on ${id}: ${out.ok ? '' : out.code}`).toBe(true);
                  if (out.ok) {
                    expect(out.value.runs.map((r) => r.id)).toEqual(m.runs);
                    expect(out.value.notes).toBe(m.notes);
                    expect(out.value.revision).toBe(m.rev);
                    copies.set(`${op.client}:${id}`, out.value);
                  }
                },
              }),
            );
          }
          case 'reload':
            return store.load(id).then((out) =>
              arrivals.push({
                check: () => {
                  if (m.deleted) expect(out).toMatchObject({ ok: false, code: 'not-found' });
                  else {
                    expect(out.ok).toBe(true);
                    if (out.ok) {
                      expect(out.value.runs.map((r) => r.id)).toEqual(m.runs);
                      copies.set(`${op.client}:${id}`, out.value);
                    }
                  }
                },
              }),
            );
          case 'delete-run':
          case 'restore-run': {
            // Pick a run id as of issuing (it may be gone by the time the store gets to it).
            const pool = op.kind === 'delete-run' ? m.runs : m.trash;
            const runId = pool.length > 0 ? pool[op.pick % pool.length] : 'run-none';
            const call = op.kind === 'delete-run' ? store.deleteRun(id, runId) : store.restoreRun(id, runId);
            return call.then((out) =>
              arrivals.push({
                check: () => {
                  const from = op.kind === 'delete-run' ? m.runs : m.trash;
                  const to = op.kind === 'delete-run' ? m.trash : m.runs;
                  if (!from.includes(runId)) {
                    expect(out).toMatchObject({ ok: false, code: 'not-found' });
                    return;
                  }
                  from.splice(from.indexOf(runId), 1);
                  to.push(runId);
                  m.rev++;
                  expect(out.ok).toBe(true);
                },
              }),
            );
          }
          case 'delete':
          case 'undelete': {
            const call = op.kind === 'delete' ? store.deleteRecord(id) : store.undelete(id);
            return call.then((out) =>
              arrivals.push({
                check: () => {
                  const applies = op.kind === 'delete' ? !m.deleted : m.deleted;
                  if (!applies) {
                    expect(out).toMatchObject({ ok: false, code: 'not-found' });
                    return;
                  }
                  m.deleted = op.kind === 'delete';
                  m.rev++;
                  expect(out.ok).toBe(true);
                },
              }),
            );
          }
          case 'autosave': {
            // Autosaves of one session are numbered in the order they are made; they may land in any order.
            const s = ++seq;
            autosaveSeqs.push(s);
            return store.autosave({ seq: s }, s).then((out) =>
              arrivals.push({
                check: () => expect(out.ok).toBe(true),
              }),
            );
          }
        }
      });
      // Autosaves issued in a batch are also sent out of order: reverse a copy to land older ones last.
      await Promise.all(pending);
      for (const a of arrivals) a.check();
    }

    // The store equals the model.
    const listed = await store.listIds();
    expect(listed.live).toEqual(ids.filter((id) => !model.get(id)!.deleted).sort());
    expect(listed.trashed).toEqual(ids.filter((id) => model.get(id)!.deleted).sort());
    for (const id of ids) {
      const m = model.get(id)!;
      if (m.deleted) {
        await store.undelete(id);
        m.rev++;
      }
      const r = await store.load(id);
      expect(r.ok).toBe(true);
      if (!r.ok) continue;
      expect(r.value.runs.map((x) => x.id)).toEqual(m.runs);
      expect((r.value.trash ?? []).map((t) => t.run.id)).toEqual(m.trash);
      expect(r.value.notes).toBe(m.notes);
      expect(r.value.revision).toBe(m.rev);
    }
    if (autosaveSeqs.length > 0) {
      const a = await store.loadAutosave();
      expect(a.ok && a.value.kind === 'found' && a.value.state).toEqual({ seq: Math.max(...autosaveSeqs) });
    }
  } finally {
    await store.close();
  }
}

/** Batches of operations issued at once. */
export const scenarios = fc.array(fc.array(opArb, { minLength: 1, maxLength: 6 }), {
  minLength: 1,
  maxLength: 6,
});
