// Reliability: a process writing records is killed (SIGKILL, no chance to clean up) at random moments, until
// at least 500 kills have happened and at least 50 saves were acknowledged, however long that takes on a
// loaded machine (within a generous cap). SIGKILL never loses the page cache, so this checks atomic
// replacement and clean-up; losing fsyncs is checked by test/records-durability.test.ts. After every kill the record on disk must be the old version or the new one, complete and
// valid, never a torn file; a temporary file left by the kill must never be taken for a record; and the
// autosaved run must resume to the same table.
//
// The writer (test/fixtures/records-writer.ts) uses the real records store and is run as an esbuild bundle
// in plain Node. What makes this hold is atomic replacement: write a temporary file, fsync, rename over the
// old one (POSIX rename(2) replaces the target atomically; main/atomic-file.ts).
import { spawn } from 'node:child_process';
import { mkdir, mkdtemp, readdir, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { build } from 'esbuild';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { TEMP_PREFIX } from '../../main/atomic-file.ts';
import { createRecordsStore } from '../../main/records-store.ts';
import { deserializeRun, runCaptures, serializeRun } from '../../dsp/calibration/index.ts';
import { CRASH_RECORD_ID, crashGeneration, scriptedRunStates } from '../fixtures/crash-run.ts';
import { rng } from '../helpers/random.ts';

const root = path.resolve(import.meta.dirname, '../..');
/** Kills and acknowledged saves to reach (all lanes together); the lanes run side by side. */
const MIN_KILLS = 500;
const MIN_ACKNOWLEDGED = 50;
const LANES = 4;
/** Give up (and fail) after this long, ms. */
const CAP_MS = 45 * 60_000;
/** The kill comes this long after the writer says it is ready, ms (uniform). */
const KILL_AFTER_MS: readonly [number, number] = [5, 50];

let dir: string;
let bundle: string;
let statesFile: string;
const states = scriptedRunStates();
const stateTexts = states.map((s) => serializeRun(s));

beforeAll(async () => {
  dir = await mkdtemp(path.join(tmpdir(), 'spanmeter-crash-'));
  bundle = path.join(dir, 'records-writer.mjs');
  statesFile = path.join(dir, 'states.json');
  await writeFile(statesFile, `[${stateTexts.join(',')}]`);
  await build({
    absWorkingDir: root,
    entryPoints: ['test/fixtures/records-writer.ts'],
    bundle: true,
    platform: 'node',
    format: 'esm',
    target: 'node20',
    outfile: bundle,
    minify: true, // a smaller bundle starts faster, and 520 writers are started
    logLevel: 'warning',
  });
});

afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

interface Acks {
  record: number | null;
  autosave: number | null;
  stderr: string;
}

/** Starts a writer, kills it `delayMs` after it is ready, and returns the generations it acknowledged. */
function runAndKill(recordsDir: string, autosaveFile: string, first: number, delayMs: number): Promise<Acks> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, [bundle, recordsDir, autosaveFile, String(first), statesFile], {
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let out = '';
    let stderr = '';
    let armed = false;
    child.stdout.on('data', (d: Buffer) => {
      out += d.toString();
      if (!armed && out.includes('ready\n')) {
        armed = true;
        setTimeout(() => child.kill('SIGKILL'), delayMs);
      }
    });
    child.stderr.on('data', (d: Buffer) => (stderr += d.toString()));
    child.on('error', reject);
    child.on('close', (_code, signal) => {
      if (signal !== 'SIGKILL') {
        reject(new Error(`the writer ended by itself (signal ${signal}): ${stderr}`));
        return;
      }
      const acks: Acks = { record: null, autosave: null, stderr };
      for (const line of out.split('\n')) {
        const m = /^([ra]) (\d+)$/.exec(line);
        if (m && m[1] === 'r') acks.record = Number(m[2]);
        if (m && m[1] === 'a') acks.autosave = Number(m[2]);
      }
      resolve(acks);
    });
  });
}

interface LaneTally {
  kills: number;
  savesAcknowledged: number;
  recordNew: number;
  recordOld: number;
  autosaveNew: number;
  autosaveOld: number;
  killsLeavingTemp: number;
  tempFilesAtEnd: number;
}

/** Progress of all lanes together. */
const totals = { kills: 0, acknowledged: 0, started: 0 };
const enough = () => totals.kills >= MIN_KILLS && totals.acknowledged >= MIN_ACKNOWLEDGED;
const capped = () => performance.now() - totals.started > CAP_MS;

async function lane(index: number, seed: number): Promise<LaneTally> {
  const random = rng(seed);
  const base = path.join(dir, `lane-${index}`);
  const recordsDir = path.join(base, 'records');
  const autosaveFile = path.join(base, 'autosave', 'run.json');
  await mkdir(recordsDir, { recursive: true });
  const store = createRecordsStore({ recordsDir, autosaveFile });
  const t: LaneTally = {
    kills: 0,
    savesAcknowledged: 0,
    recordNew: 0,
    recordOld: 0,
    autosaveNew: 0,
    autosaveOld: 0,
    killsLeavingTemp: 0,
    tempFilesAtEnd: 0,
  };
  // The generation on disk before each writer starts (0: nothing written yet).
  let recordGen = 0;
  let autosaveGen = 0;
  const seenTemps = new Set<string>();
  for (let k = 0; !enough() && !capped(); k++) {
    const first = Math.max(recordGen, autosaveGen) + 1;
    // Once the kills are counted but too few saves were acknowledged (a loaded machine), wait longer.
    // Doubles every 40 kills past the minimum (at most 100×), so a slow machine still acknowledges saves.
    const stretch =
      totals.kills < MIN_KILLS ? 1 : Math.min(100, 2 ** Math.floor((totals.kills - MIN_KILLS) / 40));
    const delay = KILL_AFTER_MS[0] + random() * (KILL_AFTER_MS[1] * stretch - KILL_AFTER_MS[0]);
    const acks = await runAndKill(recordsDir, autosaveFile, first, delay);
    t.kills++;
    totals.kills++;
    if (acks.record !== null) {
      t.savesAcknowledged += acks.record - first + 1;
      totals.acknowledged += acks.record - first + 1;
    }
    const where = `lane ${index}, kill ${k} (seed ${seed}, ${delay.toFixed(1)} ms after ready)`;

    // The record: the old version or the new one, complete and valid. The store's list reads every record
    // file through the full check (JSON, then the zod schema); a torn file would show up as a problem (and
    // be moved aside), a temporary file taken for a record as a second entry.
    const lastRecord = acks.record ?? recordGen;
    const names = await readdir(recordsDir);
    const listed = await store.list();
    expect(listed.problems, where).toEqual([]);
    expect(
      names.filter((n) => n.includes('.corrupt-')),
      where,
    ).toEqual([]);
    if (listed.records.length > 0) {
      expect(
        listed.records.map((r) => r.id),
        where,
      ).toEqual([CRASH_RECORD_ID]);
      const gen = crashGeneration(listed.records[0].serial);
      const next = acks.record === null ? first : acks.record + 1;
      expect([lastRecord, next], where).toContain(gen);
      if (gen === lastRecord) t.recordOld++;
      else t.recordNew++;
      recordGen = gen;
    } else {
      expect(lastRecord, `${where}: the record vanished`).toBe(0);
    }
    const temps = names.filter((n) => n.startsWith(TEMP_PREFIX));
    // A temporary file not seen before was left by this kill (the next writer removes older ones at start).
    if (temps.some((n) => !seenTemps.has(n))) t.killsLeavingTemp++;
    for (const n of temps) seenTemps.add(n);

    // The autosave: old or new, and it resumes to the same run and the same table.
    const lastAutosave = acks.autosave ?? autosaveGen;
    const found = await store.loadAutosave();
    if (found.kind === 'found') {
      const state = found.state as { generation: number; run: unknown };
      const next = acks.autosave === null ? Math.max(first, autosaveGen + 1) : acks.autosave + 1;
      expect([lastAutosave, next], where).toContain(state.generation);
      if (state.generation === lastAutosave) t.autosaveOld++;
      else t.autosaveNew++;
      autosaveGen = state.generation;
      const resumed = deserializeRun(JSON.stringify(state.run));
      const expected = states[state.generation % states.length];
      // Compared as data: a loaded capture gains its defaulted fields in another key order, the same run.
      expect(JSON.parse(serializeRun(resumed)), where).toEqual(
        JSON.parse(stateTexts[state.generation % states.length]),
      );
      expect(runCaptures(resumed), where).toEqual(runCaptures(expected));
    } else {
      expect(lastAutosave, `${where}: the autosave vanished`).toBe(0);
    }
    const autosaveNames = await readdir(path.dirname(autosaveFile)).catch(() => [] as string[]);
    expect(
      autosaveNames.filter((n) => n.includes('.corrupt-')),
      where,
    ).toEqual([]);
  }
  // The next start cleans up what the kills left behind.
  const restarted = createRecordsStore({ recordsDir, autosaveFile });
  await restarted.list();
  t.tempFilesAtEnd = (await readdir(recordsDir)).filter((n) => n.startsWith(TEMP_PREFIX)).length;
  t.tempFilesAtEnd += (await readdir(path.dirname(autosaveFile)).catch(() => [] as string[])).filter((n) =>
    n.startsWith(TEMP_PREFIX),
  ).length;
  return t;
}

describe('records store: writers killed at random moments', () => {
  it(
    `at least ${MIN_KILLS} SIGKILLs and ${MIN_ACKNOWLEDGED} acknowledged saves: the record and the autosave are always the old or the new version`,
    async () => {
      const started = performance.now();
      totals.started = started;
      const seed = 20310314;
      const tallies = await Promise.all(Array.from({ length: LANES }, (_, i) => lane(i, seed + i)));
      const sum = (k: keyof LaneTally) => tallies.reduce((n, t) => n + t[k], 0);
      const seconds = (performance.now() - started) / 1000;
      console.log(
        `[records-crash] ${sum('kills')} kills in ${seconds.toFixed(1)} s (${LANES} lanes), ` +
          `${sum('savesAcknowledged')} record saves acknowledged; record after a kill: ${sum('recordOld')} old, ` +
          `${sum('recordNew')} new (the save in flight had landed); autosave: ${sum('autosaveOld')} old, ` +
          `${sum('autosaveNew')} new; kills that left a temporary file: ${sum('killsLeavingTemp')} ` +
          `(none listed as a record; ${sum('tempFilesAtEnd')} left after the next start); torn files: 0`,
      );
      expect(capped(), `gave up after ${CAP_MS / 60_000} min`).toBe(false);
      expect(sum('kills')).toBeGreaterThanOrEqual(MIN_KILLS);
      expect(sum('tempFilesAtEnd')).toBe(0);
      // The kills must land at every stage of a save, not only before it: a kill after the rename leaves the
      // new version, one before it the old, and one between creating and renaming the temporary file leaves
      // that file behind. All three must have happened.
      expect(sum('savesAcknowledged')).toBeGreaterThanOrEqual(MIN_ACKNOWLEDGED);
      expect(sum('recordNew')).toBeGreaterThan(0);
      expect(sum('recordOld')).toBeGreaterThan(0);
      expect(sum('killsLeavingTemp')).toBeGreaterThan(0);
    },
    CAP_MS + 120_000,
  );
});
