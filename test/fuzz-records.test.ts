// Reliability: the record loader, the autosave loader, the saved-run loader and the plan parser under
// generated JSON and strings. Each must end in a valid value or a typed error, never an exception that
// escapes, never a polluted prototype, and never in a time that grows out of proportion to its input.
//
// The hostile inputs are the usual ones for JSON readers (common practice, no source): prototype-pollution
// keys (`__proto__`, `constructor`, `prototype`), numbers JSON can write but a double cannot hold (1e999,
// 30-digit integers, subnormals), deep nesting, wrong types, strings with control characters and lone
// surrogates, torn (cut) files. JSON itself: ECMA-404 / RFC 8259.
import { mkdir, mkdtemp, readFile, readdir, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import fc from 'fast-check';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { MAX_PAYLOAD_BYTES, MAX_RECORD_FILE_BYTES, UnitRecordDraftSchema } from '../main/ipc-contract.ts';
import { StoreError, createRecordsStore, parseRecordText } from '../main/records-store.ts';
import {
  PLAN_LIMITS,
  formatPlan,
  parsePlan,
  presetPlan,
  type PlanErrorReason,
  type PlanParse,
} from '../dsp/calibration/index.ts';
import {
  RunStateError,
  createRun,
  deserializeRun,
  runReducer,
  serializeRun,
  validateRunState,
  type RunState,
} from '../dsp/calibration/index.ts';
import { sampleDraft, sampleRecord, sampleRun } from './main-fixtures.ts';
import {
  noteTime,
  slowest,
  type Json,
  mutationArb,
  mutatedText,
  cutArb,
  mutatedRecordTextArb,
  expectNoPollution,
  expectPlainTree,
  timed,
  checkParsed,
} from './fuzz-records-harness.ts';

afterAll(() => console.log(`[fuzz-records] slowest call ${slowest.ms.toFixed(1)} ms: ${slowest.what}`));

// ---------------------------------------------------------------------------------------------------------

describe('parseRecordText (the pure check the records store uses)', () => {
  // The full 3000-record search runs in the long lane (test/long/fuzz-records.test.ts); this is the same
  // generator and seed over 600 records, with the floors scaled to match (100 and 1000 of 3000).
  it('600 mutated records: prototype keys, huge numbers, deep nesting, wrong types, control characters', () => {
    const tally: Record<string, number> = {};
    fc.assert(
      fc.property(mutatedRecordTextArb, (text) => {
        checkParsed(text, tally);
      }),
      { numRuns: 600, seed: 1405 },
    );
    console.log(`[fuzz-records] mutated records: ${JSON.stringify(tally)}`);
    expect(tally.ok ?? 0).toBeGreaterThan(20); // some mutations are harmless: the valid path is exercised
    expect(tally.corrupt ?? 0).toBeGreaterThan(200);
  }, 300_000);

  it('2000 arbitrary JSON documents and 2000 arbitrary strings', () => {
    const tally: Record<string, number> = {};
    fc.assert(
      fc.property(fc.jsonValue({ maxDepth: 6 }), (v) => {
        checkParsed(JSON.stringify(v), tally);
      }),
      { numRuns: 2000, seed: 3 },
    );
    fc.assert(
      fc.property(fc.string({ unit: 'binary', maxLength: 200 }), (s) => {
        checkParsed(s, tally);
      }),
      { numRuns: 2000, seed: 4 },
    );
    console.log(`[fuzz-records] arbitrary JSON and strings: ${JSON.stringify(tally)}`);
  });

  const good = JSON.stringify(sampleRecord());
  it.each([
    ['a __proto__ key at the top', good.replace('{', '{"__proto__":{"polluted":true},'), 'corrupt'],
    [
      'a constructor.prototype key at the top',
      good.replace('{', '{"constructor":{"prototype":{"polluted":1}},'),
      'corrupt',
    ],
    [
      'a __proto__ key inside a step',
      good.replace('"volts":0,', '"volts":0,"__proto__":{"hz":1},'),
      'corrupt',
    ],
    [
      'roomTempC of 1e999 (Infinity once parsed)',
      good.replace('"roomTempC":22.5', '"roomTempC":1e999'),
      'corrupt',
    ],
    ['roomTempC of 1e308', good.replace('"roomTempC":22.5', '"roomTempC":1e308'), 'corrupt'],
    [
      'a 30-digit run count of warm-up minutes',
      good.replace('"warmUpMinutes":30', '"warmUpMinutes":123456789012345678901234567890'),
      'corrupt',
    ],
    ['schemaVersion 1e308', good.replace('"schemaVersion":2', '"schemaVersion":1e308'), 'unsupported'],
    ['schemaVersion "2" (a string)', good.replace('"schemaVersion":2', '"schemaVersion":"2"'), 'corrupt'],
    ['schemaVersion 2.0 (the same number)', good.replace('"schemaVersion":2', '"schemaVersion":2.0'), 'ok'],
    [
      'notes nested 100 000 deep',
      good.replace(/"notes":"[^"]*"/, `"notes":${'['.repeat(1e5)}${']'.repeat(1e5)}`),
      'corrupt',
    ],
    ['a whole file nested 250 000 deep', '['.repeat(2.5e5) + ']'.repeat(2.5e5), 'corrupt'],
    [
      'control characters in the notes',
      good.replace(/"notes":"[^"]*"/, '"notes":"\\u0000\\u001b[31m\\u2028\\ud800"'),
      'ok',
    ],
    ['a byte-order mark before the JSON', `\ufeff${good}`, 'corrupt'],
    ['the file cut in half', good.slice(0, good.length >> 1), 'corrupt'],
  ])('%s', (_name, text, kind) => {
    const tally: Record<string, number> = {};
    expect(checkParsed(text, tally).kind).toBe(kind);
  });
});

// ---------------------------------------------------------------------------------------------------------

describe('the records store on generated files in a temporary folder', () => {
  let dir: string;
  let n = 0;
  beforeAll(async () => {
    dir = await mkdtemp(path.join(tmpdir(), 'spanmeter-fuzz-records-'));
  });
  afterAll(async () => {
    await rm(dir, { recursive: true, force: true });
  });

  const storeErrorCodes = ['corrupt-record', 'unsupported-schema-version', 'file-too-large'];

  it('load and list: the record, or a StoreError; a damaged file is moved aside byte for byte, never deleted', async () => {
    const tally: Record<string, number> = {};
    const id = sampleRecord().id;
    await fc.assert(
      fc.asyncProperty(mutatedRecordTextArb, async (text) => {
        const recordsDir = path.join(dir, `r${n++}`);
        const store = createRecordsStore({
          recordsDir,
          autosaveFile: path.join(recordsDir, '..', `a${n}.json`),
        });
        await store.list(); // a missing folder lists as empty
        await mkdir(recordsDir, { recursive: true });
        await writeFile(path.join(recordsDir, `${id}.json`), text);
        const expected = parseRecordText(text);
        const t0 = performance.now();
        const outcome = await store.load(id).then(
          (record) => ({ kind: 'ok' as const, record }),
          (err: unknown) => ({ kind: 'error' as const, err }),
        );
        noteTime(performance.now() - t0, 'a store call');
        const names = (await readdir(recordsDir)).sort();
        expect(names, 'a file is never deleted').toHaveLength(1);
        if (outcome.kind === 'ok') {
          tally.ok = (tally.ok ?? 0) + 1;
          expect(expected.kind === 'ok' && expected.record.id === id).toBe(true);
          if (expected.kind === 'ok') expect(outcome.record).toEqual(expected.record);
          expectPlainTree(outcome.record);
          expect(names).toEqual([`${id}.json`]);
        } else {
          const err = outcome.err;
          if (!(err instanceof StoreError))
            throw new Error(`load rejected with a non-StoreError: ${String(err)}`);
          tally[err.code] = (tally[err.code] ?? 0) + 1;
          expect(storeErrorCodes).toContain(err.code);
          if (err.code === 'corrupt-record') {
            expect(names[0]).toMatch(new RegExp(`^${id}\\.corrupt-\\d{8}T\\d{6}\\.\\d{3}Z\\.json$`));
            expect(await readFile(path.join(recordsDir, names[0]), 'utf8'), 'moved aside unchanged').toBe(
              text,
            );
          } else {
            expect(expected.kind).toBe('unsupported');
            expect(names).toEqual([`${id}.json`]); // left untouched
          }
        }
        // Listing never rejects; an aside file is not listed as a record.
        const listed = await store.list();
        expect(listed.records.length + listed.problems.length).toBeLessThanOrEqual(1);
        expectNoPollution();
      }),
      { numRuns: 300, seed: 99 },
    );
    console.log(`[fuzz-records] store.load on generated files: ${JSON.stringify(tally)}`);
  });

  it('save: a hostile draft is refused as invalid-payload, an accepted one loads back equal', async () => {
    const tally: Record<string, number> = {};
    const store = createRecordsStore({
      recordsDir: path.join(dir, 'save'),
      autosaveFile: path.join(dir, 'save-a.json'),
    });
    const draftTextArb = fc
      .array(mutationArb, { minLength: 1, maxLength: 3 })
      .map((ms) => mutatedText(sampleDraft() as unknown as Json, ms, null));
    await fc.assert(
      fc.asyncProperty(draftTextArb, async (text) => {
        let draft: unknown;
        try {
          draft = JSON.parse(text);
        } catch {
          return; // deep nesting can make text no JSON reader would hand to save
        }
        const outcome = await store.save(draft as never).then(
          (record) => ({ kind: 'ok' as const, record }),
          (err: unknown) => ({ kind: 'error' as const, err }),
        );
        if (outcome.kind === 'ok') {
          tally.ok = (tally.ok ?? 0) + 1;
          // Equal as JSON: advice entries keep unknown keys unchecked (z.looseObject), so a non-finite
          // number there is returned as given but stored, as JSON must, as null.
          expect(await store.load(outcome.record.id)).toEqual(JSON.parse(JSON.stringify(outcome.record)));
          await store.delete(outcome.record.id);
        } else {
          const err = outcome.err;
          if (!(err instanceof StoreError))
            throw new Error(`save rejected with a non-StoreError: ${String(err)}`);
          tally[err.code] = (tally[err.code] ?? 0) + 1;
          expect(['invalid-payload', 'file-too-large']).toContain(err.code);
        }
        expectNoPollution();
      }),
      { numRuns: 300, seed: 5 },
    );
    console.log(`[fuzz-records] store.save on generated drafts: ${JSON.stringify(tally)}`);
  });

  it('loadAutosave on generated files: found, or a StoreError', async () => {
    const tally: Record<string, number> = {};
    const autosaveFile = path.join(dir, 'autosave', 'run.json');
    const store = createRecordsStore({ recordsDir: path.join(dir, 'unused'), autosaveFile });
    await store.saveAutosave({ step: 0 });
    const wrapped = JSON.parse(await readFile(autosaveFile, 'utf8')) as Json;
    const textArb = fc.oneof(
      fc
        .tuple(fc.array(mutationArb, { maxLength: 3 }), cutArb)
        .map(([ms, cut]) => mutatedText(wrapped, ms, cut)),
      fc.string({ unit: 'binary', maxLength: 100 }),
    );
    await fc.assert(
      fc.asyncProperty(textArb, async (text) => {
        await writeFile(autosaveFile, text);
        const outcome = await store.loadAutosave().then(
          (value) => ({ kind: 'ok' as const, value }),
          (err: unknown) => ({ kind: 'error' as const, err }),
        );
        if (outcome.kind === 'ok') {
          tally[outcome.value.kind] = (tally[outcome.value.kind] ?? 0) + 1;
          expect(outcome.value.kind).toBe('found');
        } else {
          const err = outcome.err;
          if (!(err instanceof StoreError))
            throw new Error(`loadAutosave rejected with a non-StoreError: ${String(err)}`);
          tally[err.code] = (tally[err.code] ?? 0) + 1;
          expect(['corrupt-record', 'unsupported-schema-version']).toContain(err.code);
        }
        expectNoPollution();
      }),
      { numRuns: 300, seed: 6 },
    );
    console.log(`[fuzz-records] store.loadAutosave on generated files: ${JSON.stringify(tally)}`);
  });

  it('a record of as many runs as fit the 1 MiB payload limit saves and loads back; one that cannot fit is refused', async () => {
    // Found by this suite: saved indented, such a record made a 1.5 MiB file that load then refused.
    const store = createRecordsStore({
      recordsDir: path.join(dir, 'full'),
      autosaveFile: path.join(dir, 'full-a.json'),
    });
    // A run of the one result shape with its uncertainty budgets is about 7.5 KB, so some 100 runs fit
    // (the schema allows 1000).
    const draft = sampleDraft({ runs: Array.from({ length: 100 }, (_, i) => sampleRun(`run-${i}`)) });
    expect(UnitRecordDraftSchema.safeParse(draft).success).toBe(true);
    expect(Buffer.byteLength(JSON.stringify(draft))).toBeLessThan(MAX_PAYLOAD_BYTES);
    const saved = await store.save(draft);
    expect(await store.load(saved.id)).toEqual(saved);
    // And one that cannot fit is refused before anything is written.
    const long = (i: number) => {
      const r = sampleRun(`run-${i}`, 'y'.repeat(80));
      return {
        ...r,
        result: {
          ...r.result,
          advice: Array.from({ length: 4 }, () => ({ ...r.result.advice[0], text: 'z'.repeat(2000) })),
        },
      };
    };
    const big = sampleDraft({ runs: Array.from({ length: 1000 }, (_, i) => long(i)) });
    expect(UnitRecordDraftSchema.safeParse(big).success).toBe(true);
    const err = await store.save(big).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(StoreError);
    expect((err as StoreError).code).toBe('file-too-large');
    expect((await store.list()).records.map((r) => r.id)).toEqual([saved.id]);
  });

  it('a record file over 1 MiB is refused as file-too-large and left untouched', async () => {
    const recordsDir = path.join(dir, 'big');
    const store = createRecordsStore({ recordsDir, autosaveFile: path.join(dir, 'big-a.json') });
    await mkdir(recordsDir, { recursive: true });
    const big = JSON.stringify({ ...sampleRecord(), notes: 'x'.repeat(MAX_RECORD_FILE_BYTES) });
    await writeFile(path.join(recordsDir, `${sampleRecord().id}.json`), big);
    const err = await store.load(sampleRecord().id).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(StoreError);
    expect((err as StoreError).code).toBe('file-too-large');
    expect(await readdir(recordsDir)).toEqual([`${sampleRecord().id}.json`]);
  });
});

// ---------------------------------------------------------------------------------------------------------

describe('deserializeRun / validateRunState (resuming an autosaved run) under mutated saves', () => {
  // A run part-way through: readings at an invented 110 Hz, so the detector and capture window hold state.
  let state: RunState = createRun(presetPlan('octaves-0-4'));
  for (let i = 0; i < 60; i++) {
    state = runReducer(state, {
      type: 'reading',
      reading: {
        kind: 'ok',
        hz: 110,
        uncertaintyCents: 0.05,
        clarity: 0.99,
        level: { rmsDbfs: -14, peakDbfs: -8, clippedFraction: 0 },
        windowSeconds: 0.1,
        harmonicsUsed: 12,
        timeSeconds: i * 0.05,
      },
    });
  }
  const saved = JSON.parse(serializeRun(state)) as Json;

  it('2000 mutated saves: a working run or RunStateError, nothing else', () => {
    const tally: Record<string, number> = {};
    fc.assert(
      fc.property(fc.array(mutationArb, { maxLength: 4 }), cutArb, (ms, cut) => {
        const text = mutatedText(saved, ms, cut);
        const t0 = performance.now();
        let restored: RunState | null = null;
        try {
          restored = deserializeRun(text);
        } catch (err) {
          if (!(err instanceof RunStateError)) throw new Error(`deserializeRun threw ${String(err)}`);
          expect(err.issues.length).toBeGreaterThan(0);
        }
        noteTime(performance.now() - t0, 'a store call');
        tally[restored ? 'ok' : 'refused'] = (tally[restored ? 'ok' : 'refused'] ?? 0) + 1;
        if (restored) {
          expect(validateRunState(JSON.parse(serializeRun(restored))).kind).toBe('ok');
          expectPlainTree(restored);
          // A restored run goes on taking events without throwing.
          runReducer(restored, { type: 'pause' });
        }
        let parsed: unknown;
        try {
          parsed = JSON.parse(text);
        } catch {
          parsed = undefined;
        }
        expect(['ok', 'error']).toContain(validateRunState(parsed).kind);
        expectNoPollution();
      }),
      { numRuns: 2000, seed: 8 },
    );
    console.log(`[fuzz-records] deserializeRun on mutated saves: ${JSON.stringify(tally)}`);
    expect(tally.ok ?? 0).toBeGreaterThan(50);
  });
});

// ---------------------------------------------------------------------------------------------------------

const REASONS: readonly PlanErrorReason[] = [
  'empty',
  'not-a-number',
  'bad-step',
  'range-misses-end',
  'out-of-range',
  'duplicate',
  'too-few-points',
  'too-many-points',
];

/** parsePlan on one text: typed outcome, in time, and a plan within PLAN_LIMITS when accepted. */
function checkPlan(text: string, tally: Record<string, number>): PlanParse {
  const { value: r, ms } = timed(() => parsePlan(text));
  noteTime(ms, `parsePlan on ${text.length} characters`);
  const key = r.kind === 'ok' ? 'ok' : r.reason;
  tally[key] = (tally[key] ?? 0) + 1;
  if (r.kind === 'ok') {
    expect(r.volts.length).toBeGreaterThanOrEqual(PLAN_LIMITS.minPoints);
    expect(r.volts.length).toBeLessThanOrEqual(PLAN_LIMITS.maxPoints);
    const sorted = [...r.volts].sort((a, b) => a - b);
    sorted.forEach((v, i) => {
      expect(Number.isFinite(v)).toBe(true);
      expect(v).toBeGreaterThanOrEqual(PLAN_LIMITS.minVolts);
      expect(v).toBeLessThanOrEqual(PLAN_LIMITS.maxVolts);
      if (i > 0) expect(v - sorted[i - 1]).toBeGreaterThanOrEqual(PLAN_LIMITS.minSpacingVolts);
    });
    // What formatPlan writes reads back to the same voltages (to a nanovolt).
    const back = parsePlan(formatPlan(r.volts));
    expect(back.kind).toBe('ok');
    if (back.kind === 'ok') back.volts.forEach((v, i) => expect(Math.abs(v - r.volts[i])).toBeLessThan(1e-9));
  } else {
    expect(REASONS).toContain(r.reason);
    expect(r.message.length).toBeGreaterThan(0);
  }
  return r;
}

/** Plan-like text: numbers, ranges, steps, units, separators and junk, so the grammar's corners are reached. */
const planNumArb = fc.oneof(
  { weight: 3, arbitrary: fc.integer({ min: -13, max: 13 }).map(String) },
  {
    weight: 2,
    arbitrary: fc.double({ min: -14, max: 14, noNaN: true }).map((v) => String(Math.round(v * 1000) / 1000)),
  },
  {
    weight: 1,
    arbitrary: fc.constantFrom('.5', '-0', '+1', '1e0', '2.', '1e999', 'e5', '.', '-', '0x10', '½', '١'),
  },
);
const planSpaceArb = fc.constantFrom('', ' ', '  ', '\t', '\u00a0');
const planItemArb = fc.oneof(
  {
    weight: 3,
    arbitrary: fc.tuple(planNumArb, planSpaceArb, fc.constantFrom('', 'v', 'V')).map((p) => p.join('')),
  },
  {
    weight: 2,
    arbitrary: fc
      .tuple(planNumArb, fc.constantFrom('-', '–', '..', ' to ', '--'), planNumArb)
      .map((p) => p.join('')),
  },
  {
    weight: 2,
    arbitrary: fc
      .tuple(
        planNumArb,
        fc.constantFrom('-', '..', ' to '),
        planNumArb,
        fc.constantFrom('/', ' by ', ' step ', '/-'),
        fc.constantFrom('1', '0.5', '0.25', '1/12', '0.0833333', '0', '3', '0.1'),
      )
      .map((p) => p.join('')),
  },
  { weight: 1, arbitrary: fc.string({ unit: 'grapheme-ascii', maxLength: 6 }) },
);
const planTextArb = fc
  .tuple(fc.array(planItemArb, { maxLength: 12 }), fc.constantFrom(',', ', ', ';', '\n', ',,', ' ; '))
  .map(([items, sep]) => items.join(sep));

describe('parsePlan under generated text', () => {
  it('4000 plan-like texts and 2000 arbitrary strings: a plan within the limits or a typed error', () => {
    const tally: Record<string, number> = {};
    fc.assert(
      fc.property(planTextArb, (t) => {
        checkPlan(t, tally);
      }),
      { numRuns: 4000, seed: 12 },
    );
    fc.assert(
      fc.property(fc.string({ unit: 'binary', maxLength: 100 }), (t) => {
        checkPlan(t, tally);
      }),
      { numRuns: 2000, seed: 13 },
    );
    console.log(`[fuzz-records] parsePlan: ${JSON.stringify(tally)}`);
    expect(tally.ok ?? 0).toBeGreaterThan(100);
  });

  it('a list of distinct voltages written out reads back exactly', () => {
    fc.assert(
      fc.property(
        fc
          .uniqueArray(fc.integer({ min: -12_000, max: 12_000 }), { minLength: 2, maxLength: 64 })
          .map((mv) => mv.map((m) => m / 1000)),
        fc.constantFrom(', ', ',', ';', '\n', ' ; '),
        (volts, sep) => {
          const r = checkPlan(volts.join(sep), {});
          expect(r).toEqual({ kind: 'ok', volts });
        },
      ),
      { numRuns: 1000, seed: 14 },
    );
  });

  // Long pasted text: the parser's time must grow about linearly with its length, not with its square.
  const n = 100_000;
  it.each([
    ['spaces after a number', `1${' '.repeat(n)}x`],
    ['spaces before a range sign', `1${' '.repeat(n)}-`],
    ['spaces around a unit', `1${' '.repeat(n)}v${' '.repeat(n)}x`],
    ['spaces after a range', `0-1${' '.repeat(n)}/`],
    ['spaces after a range end', `0-1${' '.repeat(n)}x`],
    ['a long run of digits', `${'1'.repeat(n)}x`],
    ['many separators', ','.repeat(n)],
    ['many points', Array.from({ length: n / 10 }, (_, i) => String(i)).join(',')],
    ['many ranges', '0-1,'.repeat(n / 4)],
  ])('%s (100 000 characters) in under 200 ms', (_name, text) => {
    const tally: Record<string, number> = {};
    checkPlan(text, tally);
  });
});
