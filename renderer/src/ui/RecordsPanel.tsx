/**
 * The unit book: who the unit is (name or serial, notes, room temperature, meter), saving the run to
 * its record, the list of records, opening and deleting them, comparing two runs on one chart, and the
 * exports (CSV, JSON, printed report).
 */
import { useCallback, useEffect, useState } from 'react';
import type { RecordSummary, Run, UnitRecord, UnitRecordDraft } from '../../../main/api-types.ts';
import type { CalibrationResult } from '../../../dsp/result.ts';
import { RECORD_SCHEMA_VERSION } from '../../../main/ipc-contract.ts';
import type { RecordStore } from '../storage/store.ts';
import { BookKeeping } from './BookKeeping.tsx';
import { CompareChart } from './charts.tsx';

/** What the user types about the unit. */
export interface UnitInfo {
  unitName: string;
  serial: string;
  notes: string;
  roomTempC: string;
  meterUsed: string;
  warmUpMinutes: string;
}

export const EMPTY_UNIT_INFO: UnitInfo = {
  unitName: '',
  serial: '',
  notes: '',
  roomTempC: '',
  meterUsed: '',
  warmUpMinutes: '',
};

function numberOrUndefined(s: string): number | undefined {
  const t = s.trim().replace(',', '.');
  if (t === '') return undefined;
  const v = Number(t);
  return Number.isFinite(v) ? v : undefined;
}

/**
 * A record draft from the form, with the runs to store. Empty optional fields are left out (the IPC
 * contract carries plain JSON without undefined values).
 */
export function draftFromInfo(info: UnitInfo, runs: Run[], base?: UnitRecord): UnitRecordDraft {
  const d: UnitRecordDraft = {
    schemaVersion: RECORD_SCHEMA_VERSION,
    unitName: info.unitName.trim() || info.serial.trim() || 'Unnamed unit',
    runs,
  };
  if (base) {
    d.id = base.id;
    d.createdAt = base.createdAt;
    if (base.revision !== undefined) d.revision = base.revision; // the revision this save is based on
  }
  if (info.serial.trim()) d.serial = info.serial.trim();
  if (info.notes.trim()) d.notes = info.notes;
  const t = numberOrUndefined(info.roomTempC);
  if (t !== undefined && t >= -40 && t <= 80) d.roomTempC = t;
  if (info.meterUsed.trim()) d.meterUsed = info.meterUsed.trim();
  const w = numberOrUndefined(info.warmUpMinutes);
  if (w !== undefined && w >= 0 && w <= 1440) d.warmUpMinutes = w;
  return d;
}

function infoFromRecord(r: UnitRecord): UnitInfo {
  return {
    unitName: r.unitName,
    serial: r.serial ?? '',
    notes: r.notes ?? '',
    roomTempC: r.roomTempC === undefined ? '' : String(r.roomTempC),
    meterUsed: r.meterUsed ?? '',
    warmUpMinutes: r.warmUpMinutes === undefined ? '' : String(r.warmUpMinutes),
  };
}

function newRunId(): string {
  return typeof crypto !== 'undefined' && 'randomUUID' in crypto
    ? crypto.randomUUID()
    : `run-${Date.now().toString(36)}-${Math.floor(Math.random() * 1e9).toString(36)}`;
}

export interface RecordsPanelProps {
  store: RecordStore;
  info: UnitInfo;
  onInfo(i: UnitInfo): void;
  /**
   * What a save stores: the one result (`dsp/result.ts`) of the live run or of an opened recording, or
   * null when there is nothing to save.
   */
  result: CalibrationResult | null;
  planVolts: readonly number[];
  onExport(format: 'csv' | 'json'): void;
  onPrint(): void;
  onSaved(): void;
  /** The record the next save adds to (kept by the app, so it survives switching tabs), or null. */
  openRecord: UnitRecord | null;
  onOpenRecord(r: UnitRecord | null): void;
}

export function RecordsPanel(p: RecordsPanelProps) {
  const [list, setList] = useState<RecordSummary[]>([]);
  const open = p.openRecord;
  const setOpen = p.onOpenRecord;
  const [label, setLabel] = useState(open && open.runs.length > 0 ? 'after' : 'before');
  const [compare, setCompare] = useState<string[]>(() => (open ? open.runs.slice(-2).map((x) => x.id) : []));
  const [message, setMessage] = useState<{ kind: 'info' | 'error'; text: string } | null>(null);

  const refresh = useCallback(async () => {
    const r = await p.store.listRecords();
    if (r.ok) setList(r.value);
    else setMessage({ kind: 'error', text: r.error.message });
  }, [p.store]);

  useEffect(() => {
    void refresh();
  }, [refresh]);

  const canSave = p.result !== null && p.result.steps.length > 0;

  const save = async () => {
    if (!p.result) return;
    const run: Run = {
      id: newRunId(),
      takenAt: new Date().toISOString(),
      label: label.trim() || 'run',
      plan: { volts: [...p.planVolts] },
      result: p.result,
    };
    const draft = draftFromInfo(p.info, [...(open?.runs ?? []), run], open ?? undefined);
    const r = await p.store.saveRecord(draft);
    if (r.ok) {
      setOpen(r.value);
      setCompare(r.value.runs.slice(-2).map((x) => x.id));
      const n = r.value.runs.length;
      setMessage({
        kind: 'info',
        text: `Saved as run “${run.label}” of ${r.value.unitName} (${n} run${n === 1 ? '' : 's'}).`,
      });
      p.onSaved();
      void refresh();
    } else setMessage({ kind: 'error', text: r.error.message });
  };

  const load = async (id: string) => {
    const r = await p.store.loadRecord(id);
    if (r.ok) {
      setOpen(r.value);
      p.onInfo(infoFromRecord(r.value));
      setCompare(r.value.runs.slice(-2).map((x) => x.id));
      setMessage(null);
    } else setMessage({ kind: 'error', text: r.error.message });
  };

  const remove = async (id: string, name: string) => {
    if (!window.confirm(`Delete the record of ${name} and all its runs?`)) return;
    const r = await p.store.deleteRecord(id);
    if (r.ok) {
      if (open?.id === id) setOpen(null);
      void refresh();
    } else setMessage({ kind: 'error', text: r.error.message });
  };

  const set = (k: keyof UnitInfo) => (e: { target: { value: string } }) =>
    p.onInfo({ ...p.info, [k]: e.target.value });
  const series = (open?.runs ?? [])
    .filter((r) => compare.includes(r.id))
    .map((r) => ({
      label: `${r.label} · ${r.takenAt.slice(0, 16).replace('T', ' ')}`,
      points: r.result.steps.map((s) => ({
        volts: s.measuredVolts ?? s.volts ?? 0,
        cents: s.centsFromIdeal ?? 0,
      })),
    }));

  return (
    <div className="records-panel">
      <div className="records-grid">
        <form className="unit-form" onSubmit={(e) => e.preventDefault()}>
          <h3>{open ? `Unit: ${open.unitName}` : 'This unit'}</h3>
          <label className="field">
            <span>Unit name</span>
            <input value={p.info.unitName} onChange={set('unitName')} placeholder="e.g. OL-3 no. 17" />
          </label>
          <label className="field">
            <span>Serial</span>
            <input value={p.info.serial} onChange={set('serial')} />
          </label>
          <div className="row">
            <label className="field">
              <span>Room °C</span>
              <input value={p.info.roomTempC} onChange={set('roomTempC')} inputMode="decimal" />
            </label>
            <label className="field">
              <span>Warm-up, min</span>
              <input value={p.info.warmUpMinutes} onChange={set('warmUpMinutes')} inputMode="decimal" />
            </label>
          </div>
          <label className="field">
            <span>Meter used</span>
            <input value={p.info.meterUsed} onChange={set('meterUsed')} placeholder="make, model, range" />
          </label>
          <label className="field">
            <span>Notes</span>
            <textarea value={p.info.notes} onChange={set('notes')} rows={2} />
          </label>
          <div className="row">
            <label className="field">
              <span>Run label</span>
              <input value={label} onChange={(e) => setLabel(e.target.value)} list="run-labels" />
              <datalist id="run-labels">
                <option value="before" />
                <option value="after" />
              </datalist>
            </label>
            <button
              className="primary"
              disabled={!canSave}
              onClick={() => void save()}
              data-testid="save-run"
            >
              {open ? 'Add run to record' : 'Save new record'}
            </button>
            {open && (
              <button
                onClick={() => {
                  setOpen(null);
                  setCompare([]);
                }}
              >
                New unit
              </button>
            )}
          </div>
          <div className="row">
            <button disabled={!canSave} onClick={() => p.onExport('csv')} data-testid="export-csv">
              Export CSV
            </button>
            <button disabled={!canSave} onClick={() => p.onExport('json')} data-testid="export-json">
              Export JSON
            </button>
            <button disabled={!canSave} onClick={p.onPrint}>
              Print report
            </button>
          </div>
          {message && <p className={`message ${message.kind}`}>{message.text}</p>}
          <p className="dim small">
            {p.store.kind === 'desktop'
              ? 'Records are kept in the app’s data folder.'
              : 'Records are kept in this browser’s local storage.'}
          </p>
        </form>
        <div className="record-list">
          <h3>Records</h3>
          {list.length === 0 ? (
            <p className="dim">No records yet.</p>
          ) : (
            <ul>
              {list.map((r) => (
                <li key={r.id} className={open?.id === r.id ? 'open' : ''}>
                  <button className="link" onClick={() => void load(r.id)}>
                    {r.unitName}
                    {r.serial ? ` · ${r.serial}` : ''}
                  </button>
                  <span className="dim">
                    {r.runCount} run{r.runCount === 1 ? '' : 's'} · {r.updatedAt.slice(0, 10)}
                  </span>
                  <button className="small quiet" onClick={() => void remove(r.id, r.unitName)}>
                    Delete
                  </button>
                </li>
              ))}
            </ul>
          )}
          {open && open.runs.length > 0 && (
            <>
              <h3>Runs of {open.unitName}</h3>
              <ul className="runs">
                {open.runs.map((r) => (
                  <li key={r.id}>
                    <label>
                      <input
                        type="checkbox"
                        checked={compare.includes(r.id)}
                        onChange={(e) =>
                          setCompare((c) =>
                            e.target.checked
                              ? [...c.filter((x) => x !== r.id), r.id].slice(-2)
                              : c.filter((x) => x !== r.id),
                          )
                        }
                      />{' '}
                      {r.label} · {r.takenAt.slice(0, 16).replace('T', ' ')} ·{' '}
                      {r.result.fit ? `${r.result.fit.scaleErrorCentsPerOctave.toFixed(2)} ¢/oct` : 'no fit'}
                    </label>
                  </li>
                ))}
              </ul>
              {series.length > 0 && <CompareChart series={series} />}
            </>
          )}
          <BookKeeping
            store={p.store}
            openRecord={open}
            onOpenRecord={setOpen}
            onChanged={() => void refresh()}
            refreshKey={list}
          />
        </div>
      </div>
    </div>
  );
}
