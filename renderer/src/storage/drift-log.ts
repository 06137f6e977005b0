/**
 * Hold & drift logs as the unit book keeps them (`DriftLog` in main/ipc-contract.ts): built from the
 * engine's live view, and written out as CSV or JSON.
 */
import type { DriftLog } from '../../../main/api-types.ts';
import { DRIFT_LOG_SCHEMA_VERSION } from '../../../main/ipc-contract.ts';
import type { DriftView } from '../engine/protocol.ts';

/** Most readings a kept log holds (the schema's limit); beyond it the oldest are thinned, never the newest. */
export const MAX_DRIFT_POINTS = 40_000;

/**
 * A new drift log id: `drift-` and the start time, e.g. `drift-20310314t100000z-k3m9`.
 * @example newDriftLogId(new Date('2031-03-14T10:00:00Z'), () => 0) // → 'drift-20310314t100000z-aaaa'
 */
export function newDriftLogId(startedAt: Date, random: () => number = Math.random): string {
  const alphabet = 'abcdefghijkmnpqrstuvwxyz23456789';
  let suffix = '';
  for (let i = 0; i < 4; i++) suffix += alphabet[Math.floor(random() * alphabet.length) % alphabet.length];
  const stamp = startedAt
    .toISOString()
    .replace(/\.\d+Z$/, 'Z')
    .replace(/[-:]/g, '')
    .toLowerCase();
  return `drift-${stamp}-${suffix}`;
}

/**
 * The log of a hold as the book keeps it.
 * @example driftLogFromView(view, { id, startedAt, seq: 1, savedAt }).points.length // → view.points.length
 */
export function driftLogFromView(
  view: DriftView,
  meta: { id: string; startedAt: string; seq: number; savedAt: string; unitName?: string },
): DriftLog {
  let points = view.points.map((p) => [p.t, p.cents] as [number, number]);
  if (points.length > MAX_DRIFT_POINTS) {
    // Keep every reading of the newest half; thin the older ones evenly.
    const keepNew = MAX_DRIFT_POINTS / 2;
    const old = points.slice(0, points.length - keepNew);
    const step = old.length / (MAX_DRIFT_POINTS - keepNew);
    const thinned: [number, number][] = [];
    for (let i = 0; i < MAX_DRIFT_POINTS - keepNew; i++) thinned.push(old[Math.floor(i * step)]);
    points = [...thinned, ...points.slice(points.length - keepNew)];
  }
  return {
    schemaVersion: DRIFT_LOG_SCHEMA_VERSION,
    id: meta.id,
    startedAt: meta.startedAt,
    savedAt: meta.savedAt,
    seq: meta.seq,
    volts: view.volts,
    windowSeconds: view.windowSeconds,
    ...(meta.unitName ? { unitName: meta.unitName.slice(0, 120) } : {}),
    points: points.filter(([t, c]) => Number.isFinite(t) && Number.isFinite(c)),
  };
}

/**
 * The log as CSV (RFC 4180, CRLF line ends): one row per reading, `elapsed_s,drift_cents`, with the held
 * voltage and start time in the first columns of every row so a spreadsheet row stands on its own.
 * @example driftLogCsv(log).split('\r\n')[0] // → 'started_at,held_volts,elapsed_s,drift_cents'
 */
export function driftLogCsv(log: DriftLog): string {
  const rows = ['started_at,held_volts,elapsed_s,drift_cents'];
  for (const [t, cents] of log.points) rows.push(`${log.startedAt},${log.volts},${t},${cents}`);
  return `${rows.join('\r\n')}\r\n`;
}

/** The log as JSON, as the book keeps it. @example JSON.parse(driftLogJson(log)).schemaVersion // → 1 */
export function driftLogJson(log: DriftLog): string {
  return `${JSON.stringify(log, null, 1)}\n`;
}
