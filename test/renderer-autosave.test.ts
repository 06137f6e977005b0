// The autosave queue (renderer/src/storage/autosave.ts) and the drift log's CSV and JSON
// (renderer/src/storage/drift-log.ts). Common practice, no source: one write in flight, the newest wins.
import { describe, expect, it } from 'vitest';
import type { IpcResult } from '../main/ipc-contract.ts';
import { DriftLogSchema } from '../main/ipc-contract.ts';
import { AutosaveQueue, type AutosaveStatus } from '../renderer/src/storage/autosave.ts';
import {
  driftLogCsv,
  driftLogFromView,
  driftLogJson,
  newDriftLogId,
} from '../renderer/src/storage/drift-log.ts';

type Ok = IpcResult<{ savedAt: string }>;

function deferredWriter() {
  const calls: { value: number; seq: number; resolve: (r: Ok) => void }[] = [];
  let inFlight = 0;
  let maxInFlight = 0;
  const write = (value: number, seq: number) =>
    new Promise<Ok>((resolve) => {
      inFlight++;
      maxInFlight = Math.max(maxInFlight, inFlight);
      calls.push({
        value,
        seq,
        resolve: (r) => {
          inFlight--;
          resolve(r);
        },
      });
    });
  return { calls, write, maxInFlight: () => maxInFlight };
}

const tick = () => new Promise((r) => setTimeout(r, 0));

describe('AutosaveQueue', () => {
  it('keeps one write in flight, skips superseded states, and writes the newest last with a growing seq', async () => {
    const w = deferredWriter();
    const statuses: AutosaveStatus[] = [];
    let clock = 1000;
    const q = new AutosaveQueue<number>(
      w.write,
      (s) => statuses.push(s),
      'the run',
      () => clock,
    );
    q.push(1);
    q.push(2);
    q.push(3);
    clock = 500; // a clock that goes back does not make the seq go back
    q.push(4);
    await tick();
    expect(w.calls.map((c) => c.value)).toEqual([1]);
    w.calls[0].resolve({ ok: true, value: { savedAt: 'a' } });
    await tick();
    expect(w.calls.map((c) => c.value)).toEqual([1, 4]); // 2 and 3 were superseded, never written
    w.calls[1].resolve({ ok: true, value: { savedAt: 'b' } });
    await q.idle();
    expect(w.maxInFlight()).toBe(1);
    expect(w.calls[1].seq).toBeGreaterThan(w.calls[0].seq);
    expect(statuses.at(-1)).toMatchObject({ kind: 'saved', savedAt: 'b' });
  });

  it('reports a failure with what to do, and tries again with the next state', async () => {
    const statuses: AutosaveStatus[] = [];
    let fail = true;
    const written: number[] = [];
    const q = new AutosaveQueue<number>(
      async (v) => {
        if (fail)
          return { ok: false, error: { code: 'io-error', message: 'ENOSPC: no space left on device' } };
        written.push(v);
        return { ok: true, value: { savedAt: 'x' } };
      },
      (s) => statuses.push(s),
      'the run',
    );
    q.push(1);
    await q.idle();
    const failed = statuses.at(-1);
    expect(failed?.kind).toBe('failed');
    expect(failed?.kind === 'failed' && failed.message).toMatch(
      /^Autosave of the run failed: ENOSPC: no space left on device\. .*export it now \(CSV or JSON\)/,
    );
    fail = false;
    q.retryNow();
    await q.idle();
    expect(written).toEqual([1]);
    q.push(2);
    await q.idle();
    expect(written).toEqual([1, 2]);
  });

  it('clear waits for the write in flight and drops what is queued, so no older save lands after it', async () => {
    const w = deferredWriter();
    const q = new AutosaveQueue<number>(w.write, () => undefined, 'the run');
    q.push(1);
    q.push(2);
    const order: string[] = [];
    const cleared = q.clear(async () => order.push('clear'));
    await tick();
    w.calls[0].resolve({ ok: true, value: { savedAt: 'a' } });
    await cleared;
    expect(order).toEqual(['clear']);
    expect(w.calls.map((c) => c.value)).toEqual([1]);
  });
});

describe('drift logs', () => {
  const view = {
    volts: 2,
    windowSeconds: 60,
    points: [
      { t: 0, cents: 0 },
      { t: 1, cents: -0.25 },
      { t: 2, cents: -0.5 },
    ],
    result: { kind: 'none' as const },
    rates: [],
  };
  const log = driftLogFromView(view as never, {
    id: newDriftLogId(new Date('2031-03-14T10:00:00Z'), () => 0),
    startedAt: '2031-03-14T10:00:00.000Z',
    seq: 7,
    savedAt: '2031-03-14T10:00:05.000Z',
    unitName: 'Ostlund Lane VCO 2',
  });

  it('builds a log the schema accepts', () => {
    expect(log.id).toBe('drift-20310314t100000z-aaaa');
    expect(DriftLogSchema.parse(log)).toEqual(log);
  });

  it('writes CSV with one row per reading (RFC 4180: CRLF line ends, a header row)', () => {
    expect(driftLogCsv(log)).toBe(
      'started_at,held_volts,elapsed_s,drift_cents\r\n' +
        '2031-03-14T10:00:00.000Z,2,0,0\r\n' +
        '2031-03-14T10:00:00.000Z,2,1,-0.25\r\n' +
        '2031-03-14T10:00:00.000Z,2,2,-0.5\r\n',
    );
  });

  it('writes JSON that reads back to the same log', () => {
    expect(DriftLogSchema.parse(JSON.parse(driftLogJson(log)))).toEqual(log);
  });

  it('thins only the older half of a very long log', () => {
    const long = { ...view, points: Array.from({ length: 50_000 }, (_, i) => ({ t: i, cents: i / 1000 })) };
    const l = driftLogFromView(long as never, {
      id: 'drift-x',
      startedAt: log.startedAt,
      seq: 1,
      savedAt: log.savedAt,
    });
    expect(l.points.length).toBe(40_000);
    expect(l.points.at(-1)).toEqual([49_999, 49.999]);
    expect(l.points[0]).toEqual([0, 0]);
    expect(DriftLogSchema.safeParse(l).success).toBe(true);
  });
});
