// Durability of the desktop records store under faults and power cuts, on an injected file system
// (test/mem-fs.ts) that keeps only what fsync(2) put on the disk. What must hold (issue 10):
// - a save that fails part-way (open, write, fsync, rename, folder fsync failing; writes coming back short
//   or empty) leaves the old version readable, and its temporary file is gone by the next start;
// - a power cut at any moment of a save leaves the old version or the new one, complete, never a torn or
//   missing record, and never loses a save that was acknowledged;
// - the same check fails for a store whose fsyncs are removed (the test has teeth).
// The POSIX guarantees modelled are in test/mem-fs.ts.
import { describe, expect, it } from 'vitest';
import { TEMP_PREFIX } from '../main/atomic-file.ts';
import { UnitRecordSchema, type UnitRecord } from '../main/ipc-contract.ts';
import { createRecordsStore } from '../main/records-store.ts';
import { MemFs, type CrashImage, type Fault } from './mem-fs.ts';
import { sampleRecord, sampleRun } from './main-fixtures.ts';

const recordsDir = '/book/records';
const file = `${recordsDir}/vco-a.json`;
const OLD: UnitRecord = UnitRecordSchema.parse({ ...sampleRecord({ id: 'vco-a' }), revision: 1, trash: [] });
const NEW_RUN = sampleRun('run-after-1', 'after');

function storeOn(fs: MemFs) {
  let t = Date.parse('2031-03-14T11:00:00.000Z');
  return createRecordsStore({
    recordsDir,
    autosaveFile: '/book/autosave/run.json',
    fs,
    now: () => new Date((t += 1000)),
  });
}

function freshDisk(): MemFs {
  const fs = new MemFs();
  fs.put(file, `${JSON.stringify(OLD, null, 2)}\n`);
  fs.put('/book/autosave/.keep', '');
  return fs;
}

const runIds = (r: UnitRecord) => r.runs.map((x) => x.id).join(',');
const OLD_RUNS = runIds(OLD);
const NEW_RUNS = `${OLD_RUNS},${NEW_RUN.id}`;

/** Opens a new store on a disk image (the next start) and says what is wrong with it, or null. */
async function checkImage(image: CrashImage, mustBeNew: boolean): Promise<string | null> {
  const fs = new MemFs(image);
  const store = storeOn(fs);
  let record: UnitRecord;
  try {
    record = await store.load('vco-a');
  } catch (err) {
    return `the record cannot be read after the crash: ${(err as Error).message}`;
  }
  const runs = runIds(record);
  if (runs !== OLD_RUNS && runs !== NEW_RUNS) return `the record holds runs ${runs}`;
  if (mustBeNew && runs !== NEW_RUNS) return 'an acknowledged save was lost';
  await store.list();
  const temps = fs.list(recordsDir).filter((n) => n.startsWith(TEMP_PREFIX));
  if (temps.length > 0) return `temporary files left after the next start: ${temps.join(', ')}`;
  return null;
}

/**
 * Saves the new run with a power cut considered after every file-system operation, in both crash
 * models; returns every violation found.
 */
async function powerCutViolations(dropSync: MemFs['dropSync']): Promise<string[]> {
  const fs = freshDisk();
  const store = storeOn(fs);
  await store.list(); // start-up work done before the save is watched
  fs.dropSync = dropSync;
  const images: { at: number; durable: CrashImage; metadataFirst: CrashImage }[] = [];
  fs.afterOp = (i) =>
    images.push({ at: i, durable: fs.crashImage('durable'), metadataFirst: fs.crashImage('metadata-first') });
  await store.save({ ...OLD, runs: [...OLD.runs, NEW_RUN] });
  fs.afterOp = null;
  // Acknowledged: a cut from now on must keep the new version.
  images.push({ at: -1, durable: fs.crashImage('durable'), metadataFirst: fs.crashImage('metadata-first') });
  const violations: string[] = [];
  for (const [n, img] of images.entries()) {
    const acked = n === images.length - 1;
    for (const [mode, image] of [
      ['durable', img.durable],
      ['metadata-first', img.metadataFirst],
    ] as const) {
      const v = await checkImage(image, acked);
      if (v !== null)
        violations.push(
          `cut ${acked ? 'after the acknowledgement' : `after operation ${img.at}`} (${mode}): ${v}`,
        );
    }
  }
  return violations;
}

describe('records store: power cuts during a save', () => {
  it('keeps the old or the new version at every moment, and never loses an acknowledged save', async () => {
    expect(await powerCutViolations('none')).toEqual([]);
  });

  it.each([
    ['all', 'an acknowledged save was lost'],
    ['files', 'cannot be read after the crash'],
    ['dirs', 'an acknowledged save was lost'],
  ] as const)('FAILS for a store with fsyncs removed (%s): the test has teeth', async (drop, symptom) => {
    const violations = await powerCutViolations(drop);
    expect(violations.length).toBeGreaterThan(0);
    expect(violations.join('\n')).toContain(symptom);
  });
});

describe('records store: failing and short file-system operations', () => {
  it('leaves the old version on every failure, cleans up at the next start, and never loses an acknowledged save', async () => {
    // Count the operations of one clean save.
    const probe = freshDisk();
    const probeStore = storeOn(probe);
    await probeStore.list();
    const before = probe.ops.length;
    await probeStore.save({ ...OLD, runs: [...OLD.runs, NEW_RUN] });
    const count = probe.ops.length - before;
    expect(count).toBeGreaterThan(8); // stat, read, mkdir, open, write, sync, close, rename, folder sync…
    const kinds = new Set(probe.ops.slice(before).map((o) => o.op));
    for (const k of ['open', 'write', 'sync', 'rename'] as const) expect(kinds).toContain(k);

    const faults: Fault[] = ['fail', 'short', 'zero'];
    let failures = 0;
    for (let k = 0; k < count; k++) {
      for (const fault of faults) {
        const fs = freshDisk();
        const store = storeOn(fs);
        await store.list();
        const base = fs.ops.length;
        fs.fault = (op, i) => (i === base + k && (fault === 'fail' || op.op === 'write') ? fault : undefined);
        const outcome = await store.save({ ...OLD, runs: [...OLD.runs, NEW_RUN] }).then(
          () => 'ok' as const,
          (err: Error) => err.message,
        );
        fs.fault = null;
        if (outcome !== 'ok') failures++;
        const where = `${fault} at operation ${k} (${probe.ops[before + k]?.op})`;
        // As the program sees the disk now, and after a power cut now.
        expect(await checkImage(fs.crashImage('metadata-first'), outcome === 'ok'), where).toBeNull();
        expect(await checkImage(fs.crashImage('durable'), outcome === 'ok'), where).toBeNull();
        // The next start on the same (uncrashed) disk: the record is whole and no temporary file is left.
        const next = storeOn(fs);
        const r = await next.load('vco-a');
        expect([OLD_RUNS, NEW_RUNS], where).toContain(runIds(r));
        if (outcome === 'ok') expect(runIds(r), where).toBe(NEW_RUNS);
        await next.list();
        expect(
          fs.list(recordsDir).filter((n) => n.startsWith(TEMP_PREFIX)),
          where,
        ).toEqual([]);
      }
    }
    expect(failures).toBeGreaterThan(0); // the faults did bite
  });
});
